package e57

import (
	"io"
	"os"
	"path/filepath"
	"testing"
	"time"

	"saddlecheck/cloud"
)

// benchFile writes a synthetic E57 file of n records of the given
// coordinate encoding to a temporary directory.
func benchFile(b *testing.B, n int, scaled bool) (string, int64) {
	b.Helper()
	var fs []synthField
	for _, name := range []string{"cartesianX", "cartesianY", "cartesianZ"} {
		if scaled {
			fs = append(fs, intField(name, "ScaledInteger", -1<<31, 1<<31-1, 1e-4, 0, n, func(i int) int64 { return int64(i*7919) % (1 << 30) }))
		} else {
			fs = append(fs, floatField(name, false, n, func(i int) float64 { return float64(i) * 1e-3 }))
		}
	}
	fs = append(fs, intField("cartesianInvalidState", "Integer", 0, 2, 1, 0, n, func(int) int64 { return 0 }))
	data := buildE57([]synthScan{{name: "bench", pose: poseZ90, n: n, fields: fs}}, 16000)
	p := filepath.Join(b.TempDir(), "bench.e57")
	if err := os.WriteFile(p, data, 0o644); err != nil {
		b.Fatal(err)
	}
	return p, int64(len(data))
}

// BenchmarkE57Read reads 2^20 posed records (double or 32-bit scaled
// integer coordinates) with every page checksum verified; MB/s is bytes
// of file per second.
func BenchmarkE57Read(b *testing.B) {
	for _, tc := range []struct {
		name   string
		scaled bool
	}{{"double", false}, {"scaledint32", true}} {
		b.Run(tc.name, func(b *testing.B) {
			p, size := benchFile(b, 1<<20, tc.scaled)
			b.SetBytes(size)
			b.ReportAllocs()
			var c cloud.Chunk
			b.ResetTimer()
			defer reportCPU(b, size, cpuTime())
			for i := 0; i < b.N; i++ {
				r, err := Open(p, cloud.Options{})
				if err != nil {
					b.Fatal(err)
				}
				for {
					if err := r.Read(&c, 0); err == io.EOF {
						break
					} else if err != nil {
						b.Fatal(err)
					}
				}
				r.Close()
			}
		})
	}
}

// BenchmarkE57Pages reads and verifies every page of the same file without
// decoding: the floor set by I/O and CRC-32C verification.
func BenchmarkE57Pages(b *testing.B) {
	p, size := benchFile(b, 1<<20, false)
	f, err := os.Open(p)
	if err != nil {
		b.Fatal(err)
	}
	defer f.Close()
	b.SetBytes(size)
	b.ReportAllocs()
	b.ResetTimer()
	defer reportCPU(b, size, cpuTime())
	for i := 0; i < b.N; i++ {
		pg := newPager(f, size)
		for k := int64(0); k < pg.pages; k += blockPages {
			if err := pg.load(k); err != nil {
				b.Fatal(err)
			}
		}
	}
}

// reportCPU adds the metric MB/cpu-s: bytes per second of process CPU time
// since cpu0, steadier than wall-clock MB/s on a shared machine.
func reportCPU(b *testing.B, size int64, cpu0 time.Duration) {
	if cpu := cpuTime() - cpu0; cpu > 0 {
		b.ReportMetric(float64(b.N)*float64(size)/1e6/cpu.Seconds(), "MB/cpu-s")
	}
}
