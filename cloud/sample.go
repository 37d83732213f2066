package cloud

import (
	"io"
	"math/rand/v2"

	"gonum.org/v1/gonum/spatial/r3"
)

// Sample reads every record of the readers and keeps a uniform random
// sample of at most max accepted points with their ids, by reservoir
// sampling (Vitter 1985, "Random sampling with a reservoir", ACM TOMS
// 11(1), Algorithm R): memory is bounded by max points whatever the input
// size, and the sample is a fixed function of seed and input order. It
// returns the sample, the ids, and the number of accepted points seen.
func Sample(readers []Reader, max int, seed uint64) ([]r3.Vec, []string, int64, error) {
	rng := rand.New(rand.NewPCG(seed, 0x5a4d))
	var pts []r3.Vec
	var ids []string
	var seen int64
	var c Chunk
	for _, r := range readers {
		for {
			err := r.Read(&c, 0)
			if err == io.EOF {
				break
			}
			if err != nil {
				return nil, nil, seen, err
			}
			for i, n := 0, c.Len(); i < n; i++ {
				if c.Reject[i] != "" {
					continue
				}
				seen++
				if len(pts) < max {
					pts = append(pts, c.P[i])
					ids = append(ids, c.PointID(i))
				} else if j := rng.Int64N(seen); j < int64(max) {
					pts[j] = c.P[i]
					ids[j] = c.PointID(i)
				}
			}
		}
	}
	return pts, ids, seen, nil
}
