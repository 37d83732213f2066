package cloud

import (
	"bufio"
	"encoding/binary"
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"testing"
)

// shotsFile writes a total-station file shaped like the peer workload's
// shots_20k.csv (header id,x,y,z,code; ids 1..n; site coordinates with mm
// decimals; code SRF) and returns its path and size.
func shotsFile(b *testing.B, n int) (string, int64) {
	b.Helper()
	path := filepath.Join(b.TempDir(), "shots.csv")
	f, err := os.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	w := bufio.NewWriter(f)
	w.WriteString("id,x,y,z,code\n")
	for i := 1; i <= n; i++ {
		x := 5000 + float64(i%317)*0.0947 + float64(i)*1e-4
		y := 3000 + float64(i%211)*0.1413
		z := 100 + math.Sin(float64(i))*3
		w.WriteString(strconv.Itoa(i) + "," + strconv.FormatFloat(x, 'f', 3, 64) + "," + strconv.FormatFloat(y, 'f', 3, 64) + "," + strconv.FormatFloat(z, 'f', 3, 64) + ",SRF\n")
	}
	if err := w.Flush(); err != nil {
		b.Fatal(err)
	}
	st, _ := f.Stat()
	f.Close()
	return path, st.Size()
}

// scanFile writes a binary little-endian PLY of n vertices of double x, y,
// z and uchar intensity (the peer workload's scan_1m.ply layout).
func scanFile(b *testing.B, n int) (string, int64) {
	b.Helper()
	path := filepath.Join(b.TempDir(), "scan.ply")
	f, err := os.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	w := bufio.NewWriterSize(f, 1<<20)
	w.WriteString("ply\nformat binary_little_endian 1.0\nelement vertex " + strconv.Itoa(n) +
		"\nproperty double x\nproperty double y\nproperty double z\nproperty uchar intensity\nend_header\n")
	var rec [25]byte
	le := binary.LittleEndian
	for i := 0; i < n; i++ {
		le.PutUint64(rec[0:], math.Float64bits(5000+float64(i%1000)*0.03))
		le.PutUint64(rec[8:], math.Float64bits(3000+float64(i/1000)*0.03))
		le.PutUint64(rec[16:], math.Float64bits(100+math.Sin(float64(i))))
		rec[24] = byte(i)
		w.Write(rec[:])
	}
	if err := w.Flush(); err != nil {
		b.Fatal(err)
	}
	st, _ := f.Stat()
	f.Close()
	return path, st.Size()
}

// loopCPU runs read for every iteration of b and reports, besides the
// wall-clock MB/s of b.SetBytes, the throughput per CPU second of the whole
// process ("cpu-MB/s"), which other load on a shared machine disturbs far
// less than wall time.
func loopCPU(b *testing.B, size int64, read func()) {
	b.SetBytes(size)
	b.ReportAllocs()
	b.ResetTimer()
	start := processCPU()
	n := 0
	for b.Loop() {
		read()
		n++
	}
	if cpu := processCPU() - start; cpu > 0 {
		b.ReportMetric(float64(size)*float64(n)/1e6/cpu.Seconds(), "cpu-MB/s")
	}
}

// readFile opens path and reads every chunk, reusing one Chunk.
func readFile(b *testing.B, path string, c *Chunk) int {
	r, err := Open(path, Options{})
	if err != nil {
		b.Fatal(err)
	}
	n := 0
	for {
		err := r.Read(c, 0)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			b.Fatal(err)
		}
		n += c.Len()
	}
	r.Close()
	return n
}

// BenchmarkCSV reads a 20,000-shot total-station file; MB/s is of file
// bytes.
func BenchmarkCSV(b *testing.B) {
	path, size := shotsFile(b, 20000)
	var c Chunk
	loopCPU(b, size, func() {
		if n := readFile(b, path, &c); n != 20000 {
			b.Fatalf("read %d records", n)
		}
	})
}

// BenchmarkXYZ reads a headerless blank-separated scan export of 200,000
// points, "x y z intensity" with mm decimals (plain XYZ text).
func BenchmarkXYZ(b *testing.B) {
	const n = 200000
	path := filepath.Join(b.TempDir(), "scan.xyz")
	f, err := os.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	w := bufio.NewWriter(f)
	for i := 0; i < n; i++ {
		x := 500000 + float64(i%1000)*0.0313
		y := 5000000 + float64(i/1000)*0.0271
		z := 100 + math.Sin(float64(i))
		w.WriteString(strconv.FormatFloat(x, 'f', 3, 64) + " " + strconv.FormatFloat(y, 'f', 3, 64) + " " + strconv.FormatFloat(z, 'f', 3, 64) + " " + strconv.Itoa(i%4096) + "\n")
	}
	if err := w.Flush(); err != nil {
		b.Fatal(err)
	}
	st, _ := f.Stat()
	f.Close()
	var c Chunk
	loopCPU(b, st.Size(), func() {
		if got := readFile(b, path, &c); got != n {
			b.Fatalf("read %d records", got)
		}
	})
}

// BenchmarkPLYBinary reads a 10^6-vertex binary little-endian PLY of
// double x, y, z, uchar intensity (25 MB); MB/s is of file bytes.
func BenchmarkPLYBinary(b *testing.B) {
	const n = 1000000
	path, size := scanFile(b, n)
	var c Chunk
	loopCPU(b, size, func() {
		if got := readFile(b, path, &c); got != n {
			b.Fatalf("read %d records", got)
		}
	})
}

// BenchmarkWorkload reads the peer workload files (make_workloads.py in the
// shared peers folder) from the directory named by $SADDLECHECK_WORKLOADS,
// for side-by-side runs against the peers on the same bytes:
//
//	SADDLECHECK_WORKLOADS=DIR go test -run '^$' -bench Workload ./cloud
func BenchmarkWorkload(b *testing.B) {
	dir := os.Getenv("SADDLECHECK_WORKLOADS")
	if dir == "" {
		b.Skip("set SADDLECHECK_WORKLOADS to the folder make_workloads.py wrote")
	}
	for _, name := range []string{"shots_20k.csv", "scan_1m.ply", "scan_10m.ply"} {
		path := filepath.Join(dir, name)
		st, err := os.Stat(path)
		if err != nil {
			continue
		}
		b.Run(name, func(b *testing.B) {
			var c Chunk
			loopCPU(b, st.Size(), func() { readFile(b, path, &c) })
		})
	}
}
