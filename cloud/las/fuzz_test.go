package las

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

// FuzzLAS feeds arbitrary bytes to the reader: it must never panic, every
// error must be a *FormatError or *UnsupportedError, and a file that opens
// must read to io.EOF with exactly the announced number of records. Seeds:
// testdata/fuzz/FuzzLAS, the small shared reference files and synthetic
// files of every point format.
func FuzzLAS(f *testing.F) {
	for _, name := range []string{"1.2_0.las", "1.2_3.las", "unregistered_extra_bytes.las", "100-points.las"} {
		if data, err := os.ReadFile(filepath.Join(fuzzRefDir(), name)); err == nil {
			f.Add(data)
		}
	}
	for fm := uint8(0); fm <= 10; fm++ {
		minor := uint8(2 + fm/6*2)
		f.Add(buildLAS(minor, fm, int(fm%3), synthPoints(3)))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		r, err := NewReader(bytes.NewReader(data), int64(len(data)), cloud.Options{})
		if err != nil {
			checkTyped(t, err)
			return
		}
		_ = r.Info()
		var c cloud.Chunk
		var n int64
		for {
			err := r.Read(&c, 5)
			if err == io.EOF {
				break
			}
			if err != nil {
				checkTyped(t, err)
				return
			}
			n += int64(c.Len())
		}
		if n != r.Header().Count {
			t.Fatalf("read %d records, header announces %d", n, r.Header().Count)
		}
	})
}

func checkTyped(t *testing.T, err error) {
	t.Helper()
	var fe *FormatError
	var ue *UnsupportedError
	if !errors.As(err, &fe) && !errors.As(err, &ue) {
		t.Fatalf("untyped error %T: %v", err, err)
	}
}

// fuzzRefDir is refDir without a testing.TB: "" when the files are absent.
func fuzzRefDir() string {
	dir, err := os.Getwd()
	if err != nil {
		return ""
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			return filepath.Join(dir, "..", "shared", "reference", "las")
		}
		up := filepath.Dir(dir)
		if up == dir {
			return ""
		}
		dir = up
	}
}

var updateSeeds = flag.Bool("update-seeds", false, "rewrite the seed corpus in testdata/fuzz/FuzzLAS")

// TestWriteSeeds regenerates testdata/fuzz/FuzzLAS from synthetic files:
//
//	go test ./cloud/las -run TestWriteSeeds -update-seeds
func TestWriteSeeds(t *testing.T) {
	if !*updateSeeds {
		t.Skip("run with -update-seeds to rewrite the seed corpus")
	}
	laz := buildLAS(2, 3, 0, synthPoints(2))
	laz[104] |= 0x80
	seeds := map[string][]byte{
		"format1-2pts":   buildLAS(2, 1, 0, synthPoints(2)),
		"format7-extra3": buildLAS(4, 7, 3, synthPoints(2)),
		"format3-laz":    laz,
		"format0-cut":    buildLAS(3, 0, 0, synthPoints(3))[:235+2*20+7],
	}
	dir := filepath.Join("testdata", "fuzz", "FuzzLAS")
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
