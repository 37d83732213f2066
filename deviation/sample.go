package deviation

import (
	"math/rand/v2"

	"gonum.org/v1/gonum/spatial/r3"
)

// Sampler is a Sink that keeps, per patch, a uniform random sample of at
// most Max of the points assigned to that patch (used or far: a robust fit
// must see the outliers to separate them), by reservoir sampling
// (Vitter 1985, "Random sampling with a reservoir", ACM TOMS 11(1),
// Algorithm R). Memory is bounded by Max points per patch whatever the
// size of the input; the sample is a fixed function of the seed and the
// input order.
type Sampler struct {
	Max int
	// KeepIDs makes the sampler keep each sampled point's id beside it.
	KeepIDs bool
	rng     *rand.Rand
	pts     [][]r3.Vec
	ids     [][]string
	seen    []int64
}

// NewSampler returns a Sampler for the patches of d.
func NewSampler(d *Design, max int, seed uint64) *Sampler {
	return &Sampler{Max: max, rng: rand.New(rand.NewPCG(seed, 0x5a4d)), pts: make([][]r3.Vec, len(d.Patches)),
		ids: make([][]string, len(d.Patches)), seen: make([]int64, len(d.Patches))}
}

// Consume adds the points of r to the reservoirs.
func (s *Sampler) Consume(r *Result) error {
	c := r.Chunk
	for i, n := 0, c.Len(); i < n; i++ {
		st := r.Status[i]
		if st != StatusUsed && st != StatusFar {
			continue
		}
		k := r.Patch[i]
		s.seen[k]++
		if len(s.pts[k]) < s.Max {
			s.pts[k] = append(s.pts[k], c.P[i])
			if s.KeepIDs {
				s.ids[k] = append(s.ids[k], c.PointID(i))
			}
			continue
		}
		if j := s.rng.Int64N(s.seen[k]); j < int64(s.Max) {
			s.pts[k][j] = c.P[i]
			if s.KeepIDs {
				s.ids[k][j] = c.PointID(i)
			}
		}
	}
	return nil
}

// Points returns the sample of patch k.
func (s *Sampler) Points(k int) []r3.Vec { return s.pts[k] }

// IDs returns the ids of the sample of patch k (nil unless KeepIDs).
func (s *Sampler) IDs(k int) []string { return s.ids[k] }

// Seen returns how many points of patch k were offered.
func (s *Sampler) Seen(k int) int64 { return s.seen[k] }

// DesignSaddle returns the analytic design saddle of a patch, if it has one
// (corners and saddle patches; not planes or meshes).
func DesignSaddle(p *Patch) (*Saddle, bool) {
	switch s := p.Surface.(type) {
	case *SaddlePatch:
		return &s.Saddle, true
	case *BilinearPatch:
		return &s.Saddle, true
	}
	return nil, false
}
