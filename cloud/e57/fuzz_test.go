package e57

import (
	"bytes"
	"errors"
	"flag"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"saddlecheck/cloud"
)

// FuzzE57 feeds arbitrary bytes to the reader, once as given and once with
// every page checksum rewritten (so that mutations reach the XML and packet
// decoders): it must never panic, and every error must be typed. Seeds:
// testdata/fuzz/FuzzE57, a synthetic file and the 1 KB bad-crc.e57.
func FuzzE57(f *testing.F) {
	for _, name := range []string{"bad-crc.e57"} { // small seeds keep the fuzzer fast
		if data, err := os.ReadFile(filepath.Join(refDir(), name)); err == nil {
			f.Add(data)
		}
	}
	f.Add(buildE57(synthScans()[1:], 40))
	f.Fuzz(func(t *testing.T, data []byte) {
		fuzzOne(t, data)
		fuzzOne(t, recrc(append([]byte(nil), data...)))
	})
}

func fuzzOne(t *testing.T, data []byte) {
	r, err := NewReader(bytes.NewReader(data), int64(len(data)), cloud.Options{})
	if err != nil {
		checkTyped(t, err)
		return
	}
	_ = r.Info()
	var c cloud.Chunk
	var n int64
	for {
		err := r.Read(&c, 1000)
		if err == io.EOF {
			break
		}
		if err != nil {
			checkTyped(t, err)
			return
		}
		n += int64(c.Len())
	}
	if n != r.Info().Count {
		t.Fatalf("read %d records, the scans announce %d", n, r.Info().Count)
	}
}

func checkTyped(t *testing.T, err error) {
	t.Helper()
	var fe *FormatError
	var ue *UnsupportedError
	var ce *ChecksumError
	if !errors.As(err, &fe) && !errors.As(err, &ue) && !errors.As(err, &ce) {
		t.Fatalf("untyped error %T: %v", err, err)
	}
}

var updateSeeds = flag.Bool("update-seeds", false, "rewrite the seed corpus in testdata/fuzz/FuzzE57")

// TestWriteSeeds regenerates testdata/fuzz/FuzzE57 from synthetic files:
//
//	go test ./cloud/e57 -run TestWriteSeeds -update-seeds
func TestWriteSeeds(t *testing.T) {
	if !*updateSeeds {
		t.Skip("run with -update-seeds to rewrite the seed corpus")
	}
	small := synthScans()
	small[0].n = 20
	for i := range small[0].fields {
		f := &small[0].fields[i]
		if f.raw != nil {
			f.raw = f.raw[:20]
		} else {
			f.val = f.val[:20]
		}
	}
	seeds := map[string][]byte{
		"posed-cartesian": buildE57(small[:1], 17),
		"spherical-empty": buildE57(synthScans()[1:], 300),
	}
	dir := filepath.Join("testdata", "fuzz", "FuzzE57")
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	for name, data := range seeds {
		body := "go test fuzz v1\n[]byte(" + strconv.Quote(string(data)) + ")\n"
		if err := os.WriteFile(filepath.Join(dir, name), []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// FuzzE57XML fuzzes the XML section parser alone (the binary layers make
// whole-file mutations reach it rarely): no panic, typed errors only, and
// every scan it accepts has coordinates. Seeds: the XML of synthetic files.
func FuzzE57XML(f *testing.F) {
	for _, s := range [][]synthScan{synthScans(), synthScans()[1:2]} {
		data := buildE57(s, 100)
		p := newPager(bytes.NewReader(data), int64(len(data)))
		h, err := readHeader(p, int64(len(data)))
		if err != nil {
			f.Fatal(err)
		}
		x := make([]byte, h.XMLLength)
		xl, _ := toLogical(int64(h.XMLOffset))
		if err := p.readAt(x, xl); err != nil {
			f.Fatal(err)
		}
		f.Add(x)
	}
	f.Fuzz(func(t *testing.T, x []byte) {
		_, scans, err := parseXML(x, 0)
		if err != nil {
			checkTyped(t, err)
			return
		}
		for _, s := range scans {
			if s.Records < 0 || len(s.Fields) < 3 {
				t.Fatalf("accepted scan %+v", s)
			}
		}
	})
}
