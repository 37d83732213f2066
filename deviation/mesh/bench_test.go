package mesh

import (
	"math"
	"os"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// benchSaddle is a 30 m × 30 m patch of z = x²/144 − y²/81 at site
// coordinates, meshed with 316 × 316 cells × 2 = 199,712 triangles.
var benchSaddle = testSaddle{Alpha: 1.0 / 144, Beta: 1.0 / 81, X0: 3, X1: 33, Y0: -9, Y1: 21,
	Offset: r3.Vec{X: 500000, Y: 5400000, Z: 100}}

var benchCells = 316

var benchOnce = sync.OnceValues(benchMesh)

func benchMesh() ([]r3.Vec, [][3]int32) {
	s := &benchSaddle
	var v []r3.Vec
	for i := 0; i <= benchCells; i++ {
		for j := 0; j <= benchCells; j++ {
			v = append(v, s.Param(float64(i)/float64(benchCells), float64(j)/float64(benchCells)))
		}
	}
	id := func(i, j int) int32 { return int32(i*(benchCells+1) + j) }
	var f [][3]int32
	for i := range benchCells {
		for j := range benchCells {
			f = append(f, [3]int32{id(i, j), id(i+1, j), id(i+1, j+1)}, [3]int32{id(i, j), id(i+1, j+1), id(i, j+1)})
		}
	}
	return v, f
}

// benchPoints are queries like a scan: uniform over the patch, moved
// along the normal by Gaussian noise of σ = 2 mm (Box–Muller), 12 % by
// 5–50 cm and 3 % by 3–6 m (outliers).
func benchPoints(n int) []r3.Vec {
	s := &benchSaddle
	g := lcg(42)
	pts := make([]r3.Vec, n)
	for i := range pts {
		p := s.Param(g.float(), g.float())
		q := r3.Sub(p, s.Offset)
		nrm := r3.Unit(r3.Vec{X: -2 * s.Alpha * q.X, Y: 2 * s.Beta * q.Y, Z: 1})
		var off float64
		switch r := g.float(); {
		case r < 0.03:
			off = g.in(3, 6)
		case r < 0.15:
			off = g.in(0.05, 0.5)
		default:
			off = 0.002 * math.Sqrt(-2*math.Log(1-g.float())) * math.Cos(2*math.Pi*g.float())
		}
		if g.float() < 0.5 {
			off = -off
		}
		pts[i] = r3.Add(p, r3.Scale(off, nrm))
	}
	return pts
}

func BenchmarkBVHBuild(b *testing.B) {
	v, f := benchOnce()
	b.ReportAllocs()
	var rep *Report
	for b.Loop() {
		_, rep = mustNew(b, v, f, Options{NormalUp: true})
	}
	b.ReportMetric(rep.BytesPerTriangle, "B/triangle")
	b.ReportMetric(float64(rep.Triangles), "triangles")
}

// BenchmarkMeshProject measures queries on all cores (RunParallel); the
// points/s metric is the throughput of the whole machine.
func BenchmarkMeshProject(b *testing.B) {
	v, f := benchOnce()
	m, rep := mustNew(b, v, f, Options{NormalUp: true})
	pts := benchPoints(1 << 16)
	b.ReportAllocs()
	var next atomic.Int64
	start := time.Now()
	b.ResetTimer()
	b.RunParallel(func(pb *testing.PB) {
		i := int(next.Add(1<<12)) & (len(pts) - 1)
		sink := 0.0
		for pb.Next() {
			sink += m.Project(pts[i]).D
			i = (i + 1) & (len(pts) - 1)
		}
		if math.IsNaN(sink) {
			b.Error("NaN distance")
		}
	})
	b.ReportMetric(float64(b.N)/time.Since(start).Seconds(), "points/s")
	b.ReportMetric(rep.BytesPerTriangle, "B/triangle")
}

// TestPeerDesignMesh is a throwaway local check against a peer workload
// mesh named by SADDLECHECK_PEER_STL (skipped when unset): load, and
// report the build time.
func TestPeerDesignMesh(t *testing.T) {
	path := os.Getenv("SADDLECHECK_PEER_STL")
	if path == "" {
		t.Skip("SADDLECHECK_PEER_STL not set")
	}
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	t0 := time.Now()
	m, rep, err := ReadSTL(fh, 1, r3.Vec{}, Options{NormalUp: true})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("%d triangles in %v; %.1f B/triangle; notes %q; warnings %q", m.Triangles(), time.Since(t0), rep.BytesPerTriangle, rep.Notes, rep.Warnings)
}

// BenchmarkMeshProjectAll is BenchmarkMeshProject through ProjectAll in
// chunks of 65,536 points, one chunk per goroutine at a time.
func BenchmarkMeshProjectAll(b *testing.B) {
	v, f := benchOnce()
	m, rep := mustNew(b, v, f, Options{NormalUp: true})
	const chunk = 1 << 16
	pts := benchPoints(chunk)
	b.ReportAllocs()
	start := time.Now()
	var done atomic.Int64
	b.ResetTimer()
	b.RunParallel(func(pb *testing.PB) {
		dst := make([]deviation.Projection, chunk)
		for pb.Next() {
			m.ProjectAll(dst, pts)
			done.Add(chunk)
		}
	})
	b.ReportMetric(float64(done.Load())/time.Since(start).Seconds(), "points/s")
	b.ReportMetric(rep.BytesPerTriangle, "B/triangle")
}
