package mesh

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// Test shapes generated from analytic surfaces: the analytic surface is
// the reference each test compares with.

// icosphere returns the regular icosahedron (vertices (0, ±1, ±φ) and
// cyclic permutations, φ the golden ratio) subdivided level times, every
// vertex pushed onto the sphere of radius r about c, faces wound outward.
func icosphere(level int, r float64, c r3.Vec) ([]r3.Vec, [][3]int32) {
	phi := (1 + math.Sqrt(5)) / 2
	v := []r3.Vec{
		{X: -1, Y: phi}, {X: 1, Y: phi}, {X: -1, Y: -phi}, {X: 1, Y: -phi},
		{Y: -1, Z: phi}, {Y: 1, Z: phi}, {Y: -1, Z: -phi}, {Y: 1, Z: -phi},
		{X: phi, Z: -1}, {X: phi, Z: 1}, {X: -phi, Z: -1}, {X: -phi, Z: 1},
	}
	f := [][3]int32{
		{0, 11, 5}, {0, 5, 1}, {0, 1, 7}, {0, 7, 10}, {0, 10, 11},
		{1, 5, 9}, {5, 11, 4}, {11, 10, 2}, {10, 7, 6}, {7, 1, 8},
		{3, 9, 4}, {3, 4, 2}, {3, 2, 6}, {3, 6, 8}, {3, 8, 9},
		{4, 9, 5}, {2, 4, 11}, {6, 2, 10}, {8, 6, 7}, {9, 8, 1},
	}
	for i := range v {
		v[i] = r3.Unit(v[i])
	}
	for range level {
		mid := map[[2]int32]int32{}
		midpoint := func(a, b int32) int32 {
			k := [2]int32{min(a, b), max(a, b)}
			if i, ok := mid[k]; ok {
				return i
			}
			v = append(v, r3.Unit(r3.Add(v[a], v[b])))
			mid[k] = int32(len(v) - 1)
			return mid[k]
		}
		var g [][3]int32
		for _, t := range f {
			ab, bc, ca := midpoint(t[0], t[1]), midpoint(t[1], t[2]), midpoint(t[2], t[0])
			g = append(g, [3]int32{t[0], ab, ca}, [3]int32{t[1], bc, ab}, [3]int32{t[2], ca, bc}, [3]int32{ab, bc, ca})
		}
		f = g
	}
	for i := range v {
		v[i] = r3.Add(c, r3.Scale(r, v[i]))
	}
	return v, f
}

// vault returns a half cylinder of radius r about the x axis, x ∈ [0, l],
// angle from the +y axis over the top to −y in n facets (each facet chord
// subtends θ = π/n at the axis), m segments along x. Vertices lie on the
// cylinder. The area-weighted mean normal is +z for outward winding.
func vault(r, l float64, n, m int, c r3.Vec) ([]r3.Vec, [][3]int32) {
	var v []r3.Vec
	for i := 0; i <= m; i++ {
		for j := 0; j <= n; j++ {
			a := math.Pi * float64(j) / float64(n)
			v = append(v, r3.Add(c, r3.Vec{X: l * float64(i) / float64(m), Y: r * math.Cos(a), Z: r * math.Sin(a)}))
		}
	}
	id := func(i, j int) int32 { return int32(i*(n+1) + j) }
	var f [][3]int32
	for i := range m {
		for j := range n {
			f = append(f, [3]int32{id(i, j), id(i, j+1), id(i+1, j+1)}, [3]int32{id(i, j), id(i+1, j+1), id(i+1, j)})
		}
	}
	return v, f
}

// grid returns an (n+1)×(n+1) vertex grid over [0, s]² with z = h(x, y),
// two triangles per cell wound counter-clockwise seen from +z.
func grid(n int, s float64, h func(x, y float64) float64, c r3.Vec) ([]r3.Vec, [][3]int32) {
	var v []r3.Vec
	for i := 0; i <= n; i++ {
		for j := 0; j <= n; j++ {
			x, y := s*float64(i)/float64(n), s*float64(j)/float64(n)
			v = append(v, r3.Add(c, r3.Vec{X: x, Y: y, Z: h(x, y)}))
		}
	}
	id := func(i, j int) int32 { return int32(i*(n+1) + j) }
	var f [][3]int32
	for i := range n {
		for j := range n {
			f = append(f, [3]int32{id(i, j), id(i+1, j), id(i+1, j+1)}, [3]int32{id(i, j), id(i+1, j+1), id(i, j+1)})
		}
	}
	return v, f
}

// mustNew builds a mesh or fails the test.
func mustNew(t testing.TB, v []r3.Vec, f [][3]int32, opt Options) (*Mesh, *Report) {
	t.Helper()
	m, rep, err := New(v, f, opt)
	if err != nil {
		t.Fatalf("New: %v", err)
	}
	return m, rep
}

// lcg is a small deterministic random source for tests (Knuth's MMIX
// multiplier and increment, TAOCP vol. 2 §3.3.4).
type lcg uint64

func (g *lcg) float() float64 {
	*g = lcg(uint64(*g)*6364136223846793005 + 1442695040888963407)
	return float64(uint64(*g)>>11) / (1 << 53)
}

// in returns a uniform number in [a, b).
func (g *lcg) in(a, b float64) float64 { return a + (b-a)*g.float() }

// unit returns a uniform direction (normalised cube sample, rejection).
func (g *lcg) unit() r3.Vec {
	for {
		v := r3.Vec{X: g.in(-1, 1), Y: g.in(-1, 1), Z: g.in(-1, 1)}
		if n := r3.Norm(v); n > 0.1 && n <= 1 {
			return r3.Scale(1/n, v)
		}
	}
}
