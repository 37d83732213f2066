package fit

import (
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/deviation"
)

// synthSaddle is the analytic truth of the synthetic tests: a saddle with
// the peer workload's shape (z = x²/a² − y²/b², a = 12 m, b = 9 m), turned
// 20° about z and tilted, at large site offsets (easting 5e5, northing
// 5e6), so the data patch x∈[3,33], y∈[−9,21] lies far from the saddle
// point.
func synthSaddle() deviation.Saddle {
	rz := rotZ(20 * math.Pi / 180)
	tilt := rotX(3 * math.Pi / 180).mul(rotY(2 * math.Pi / 180))
	m := rz.mul(tilt)
	return deviation.Saddle{
		K1: 1.0 / 144, K2: -1.0 / 81,
		Origin: r3.Vec{X: 5e5 + 12.3, Y: 5e6 - 7.9, Z: 102.5},
		Axes:   [3]r3.Vec{m.col(0), m.col(1), m.col(2)},
	}
}

type m3 [3][3]float64

func rotZ(a float64) m3 {
	c, s := math.Cos(a), math.Sin(a)
	return m3{{c, -s, 0}, {s, c, 0}, {0, 0, 1}}
}
func rotX(a float64) m3 {
	c, s := math.Cos(a), math.Sin(a)
	return m3{{1, 0, 0}, {0, c, -s}, {0, s, c}}
}
func rotY(a float64) m3 {
	c, s := math.Cos(a), math.Sin(a)
	return m3{{c, 0, s}, {0, 1, 0}, {-s, 0, c}}
}
func (a m3) mul(b m3) m3 {
	var r m3
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			for k := 0; k < 3; k++ {
				r[i][j] += a[i][k] * b[k][j]
			}
		}
	}
	return r
}
func (a m3) col(j int) r3.Vec { return r3.Vec{X: a[0][j], Y: a[1][j], Z: a[2][j]} }

// synthOptions describe a synthetic survey of a saddle patch.
type synthOptions struct {
	n              int
	x0, x1, y0, y1 float64 // local patch bounds, metres
	noise          float64 // Gaussian sigma along the normal, metres
	outliers       float64 // fraction moved 5–50 cm off, either side
	clutter        float64 // fraction moved 3–6 m off
	seed           uint64
}

// synthPoints draws points uniformly over the local patch, moves each along
// the unit normal by Gaussian noise, and turns the given fractions into
// outliers; it reports which points are outliers.
func synthPoints(s *deviation.Saddle, o synthOptions) ([]r3.Vec, []bool) {
	rng := rand.New(rand.NewPCG(o.seed, 0x5eed))
	pts := make([]r3.Vec, o.n)
	out := make([]bool, o.n)
	for i := range pts {
		x := o.x0 + (o.x1-o.x0)*rng.Float64()
		y := o.y0 + (o.y1-o.y0)*rng.Float64()
		z := s.K1*x*x + s.K2*y*y
		n := r3.Unit(r3.Vec{X: -2 * s.K1 * x, Y: -2 * s.K2 * y, Z: 1})
		d := o.noise * rng.NormFloat64()
		u := rng.Float64()
		switch {
		case u < o.outliers:
			d = 0.05 + 0.45*rng.Float64()
			if rng.IntN(2) == 0 {
				d = -d
			}
			out[i] = true
		case u < o.outliers+o.clutter:
			d = 3 + 3*rng.Float64()
			out[i] = true
		}
		pts[i] = s.ToSite(r3.Add(r3.Vec{X: x, Y: y, Z: z}, r3.Scale(d, n)))
	}
	return pts, out
}

// workloadOptions is the shape of the peer workload: patch x∈[3,33],
// y∈[−9,21], 2 mm noise.
func workloadOptions(n int, outliers, clutter float64, seed uint64) synthOptions {
	return synthOptions{n: n, x0: 3, x1: 33, y0: -9, y1: 21, noise: 0.002, outliers: outliers, clutter: clutter, seed: seed}
}
