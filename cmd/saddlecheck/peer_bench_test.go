package main

// Side-by-side benchmarks on the peer workload files (see README,
// "Performance"). They run only when SADDLECHECK_WORKLOAD names the folder
// written by ../shared/peers/make_workloads.py (with design.yaml beside it,
// from testdata/peers/peer_design.py), and skip otherwise:
//
//	SADDLECHECK_WORKLOAD=/path/to/work go test ./cmd/saddlecheck -run '^$' -bench Peer -benchtime 3x

import (
	"io"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/cloud"
	"saddlecheck/deviation"
	"saddlecheck/fit"
)

func workload(b *testing.B, name string) string {
	dir := os.Getenv("SADDLECHECK_WORKLOAD")
	if dir == "" {
		b.Skip("SADDLECHECK_WORKLOAD is not set: no peer workload folder to benchmark on")
	}
	p := filepath.Join(dir, name)
	if _, err := os.Stat(p); err != nil {
		b.Skipf("%s absent: %v", p, err)
	}
	return p
}

func readAll(b *testing.B, path string) []r3.Vec {
	r, err := cloud.Open(path, cloud.Options{})
	if err != nil {
		b.Fatal(err)
	}
	defer r.Close()
	var pts []r3.Vec
	var c cloud.Chunk
	for {
		err := r.Read(&c, 0)
		if err == io.EOF {
			return pts
		}
		if err != nil {
			b.Fatal(err)
		}
		pts = append(pts, c.P...)
	}
}

// BenchmarkPeerRead: reading the binary PLY scans (the NumPy peer's `read`
// task: np.fromfile into an (n, 3) float64 array).
func BenchmarkPeerRead(b *testing.B) {
	for _, name := range []string{"scan_1m.ply", "scan_10m.ply", "shots_20k.csv"} {
		b.Run(name, func(b *testing.B) {
			p := workload(b, name)
			st, _ := os.Stat(p)
			b.SetBytes(st.Size())
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				r, err := cloud.Open(p, cloud.Options{})
				if err != nil {
					b.Fatal(err)
				}
				var c cloud.Chunk
				n := 0
				for {
					err := r.Read(&c, 0)
					if err == io.EOF {
						break
					}
					if err != nil {
						b.Fatal(err)
					}
					n += c.Len()
				}
				r.Close()
			}
		})
	}
}

// memReader serves preloaded points as chunks, so that a benchmark of the
// deviation stage measures the chain without the disk.
type memReader struct {
	pts  []r3.Vec
	next int
}

func (m *memReader) Read(c *cloud.Chunk, max int) error {
	c.Reset()
	if m.next >= len(m.pts) {
		return io.EOF
	}
	end := min(m.next+max, len(m.pts))
	c.P = append(c.P, m.pts[m.next:end]...)
	for i := m.next; i < end; i++ {
		c.Line = append(c.Line, int64(i+1))
		c.Reject = append(c.Reject, "")
	}
	m.next = end
	return nil
}
func (m *memReader) Info() cloud.Info { return cloud.Info{} }
func (m *memReader) Close() error     { return nil }

type nullSink struct{ n int }

func (s *nullSink) Consume(r *deviation.Result) error { s.n += r.Chunk.Len(); return nil }

// BenchmarkPeerDistance: the deviation stage — every point classified
// against the design saddle, signed orthogonal distance by the true closest
// point — through the streaming chain on all cores (the NumPy peer's
// `distance` task: vectorised Newton foot points).
func BenchmarkPeerDistance(b *testing.B) {
	for _, name := range []string{"scan_1m.ply", "scan_10m.ply"} {
		b.Run(name, func(b *testing.B) {
			p := workload(b, name)
			d, err := deviation.LoadDesign(filepath.Join(filepath.Dir(p), "design.yaml"))
			if err != nil {
				b.Skipf("design.yaml beside the workload: %v (make it with testdata/peers/peer_design.py)", err)
			}
			pts := readAll(b, p)
			b.ReportAllocs()
			benchChain(b, d, pts)
		})
	}
}

// BenchmarkPeerFit: the robust as-built fit of the 1M scan without a design
// (general quadric RANSAC, then Levenberg–Marquardt on orthogonal
// distances over all points), as the SciPy peer's `fit` task does.
func BenchmarkPeerFit(b *testing.B) {
	p := workload(b, "scan_1m.ply")
	pts := readAll(b, p)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		r, err := fit.FitSaddle(pts, &fit.SaddleSettings{CoarseSample: -1})
		if err != nil {
			b.Fatal(err)
		}
		if i == 0 {
			b.Logf("k1 %.9f (1/144 = %.9f), k2 %.9f (-1/81 = %.9f), %d inliers", r.K1.Value, 1.0/144, r.K2.Value, -1.0/81, r.NumInliers)
		}
	}
}

// BenchmarkPeerMesh: signed distance of the scan to the 199,712-triangle
// design mesh through the streaming chain on all cores, as `check` runs it
// (Open3D's RaycastingScene.compute_closest_points with the sign from the
// closest triangle's normal, in the peers). The mesh design file
// design_mesh.yaml (`mesh: design_mesh.stl`) is made by
// testdata/peers/bench.sh.
func BenchmarkPeerMesh(b *testing.B) {
	for _, name := range []string{"scan_1m.ply", "scan_10m.ply"} {
		b.Run(name, func(b *testing.B) {
			p := workload(b, name)
			d, err := deviation.LoadDesign(filepath.Join(filepath.Dir(p), "design_mesh.yaml"))
			if err != nil {
				b.Skipf("design_mesh.yaml beside the workload: %v (testdata/peers/bench.sh writes it)", err)
			}
			pts := readAll(b, p)
			benchChain(b, d, pts)
		})
	}
}

// benchChain times the streaming chain over pts against d and reports
// points/s.
func benchChain(b *testing.B, d *deviation.Design, pts []r3.Vec) {
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		s := &nullSink{}
		if err := deviation.Run([]deviation.Input{{Reader: &memReader{pts: pts}}}, d, []deviation.Sink{s}, deviation.RunOptions{}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(len(pts))*float64(b.N)/b.Elapsed().Seconds(), "points/s")
}
