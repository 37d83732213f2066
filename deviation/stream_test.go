package deviation

import (
	"errors"
	"io"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/cloud"
)

const streamDesign = `structure: stream test
units: m
normal: up
patches:
  - id: P
    corners: [[0, 0, 0], [10, 0, 0], [10, 10, 2], [0, 10, 0]]
tolerance:
  source: "test"
  limit_mm: 10
`

// fakeReader yields n records in chunks, every 13th rejected, and an
// error after failAt records when failAt > 0.
type fakeReader struct {
	n, next, failAt int
}

func (f *fakeReader) Read(c *cloud.Chunk, max int) error {
	c.Reset()
	if f.failAt > 0 && f.next >= f.failAt {
		return errors.New("boom at record")
	}
	if f.next >= f.n {
		return io.EOF
	}
	for k := 0; k < max && f.next < f.n; k++ {
		i := f.next
		f.next++
		x, y := float64(i%97)/9.7, float64(i%89)/8.9
		c.P = append(c.P, r3.Vec{X: x, Y: y, Z: 0.02 * x * y})
		c.Line = append(c.Line, int64(i+1))
		if i%13 == 0 {
			c.Reject = append(c.Reject, "bad")
		} else {
			c.Reject = append(c.Reject, "")
		}
	}
	return nil
}
func (f *fakeReader) Info() cloud.Info { return cloud.Info{} }
func (f *fakeReader) Close() error     { return nil }

type orderSink struct {
	lines   []int64
	failAt  int
	seen    int
	devMax  float64
	statusN [4]int
}

func (s *orderSink) Consume(r *Result) error {
	s.seen++
	if s.failAt > 0 && s.seen >= s.failAt {
		return errors.New("sink full")
	}
	for i := 0; i < r.Chunk.Len(); i++ {
		s.lines = append(s.lines, r.Chunk.Line[i])
		s.statusN[r.Status[i]]++
		if r.Status[i] == StatusUsed {
			s.devMax = math.Max(s.devMax, math.Abs(r.Dev[i]))
		}
	}
	return nil
}

// TestRunKeepsOrder: whatever the number of workers and the chunk size,
// sinks see every record once, in input order, and the points lying on the
// surface z = 0.02·x·y (the bilinear patch of the corners) measure zero.
func TestRunKeepsOrder(t *testing.T) {
	d, err := ParseDesign("stream.yaml", []byte(streamDesign), ".")
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct{ n, workers, chunk int }{{0, 2, 5}, {1, 1, 1}, {1000, 4, 7}, {5000, 3, 64}, {3000, 8, 1}} {
		a := &fakeReader{n: tc.n}
		b := &fakeReader{n: tc.n / 2}
		s := &orderSink{}
		err := Run([]Input{{Reader: a, Source: 0}, {Reader: b, Source: 1}}, d, []Sink{s}, RunOptions{Workers: tc.workers, ChunkSize: tc.chunk})
		if err != nil {
			t.Fatal(err)
		}
		want := tc.n + tc.n/2
		if len(s.lines) != want {
			t.Fatalf("%+v: %d records, want %d", tc, len(s.lines), want)
		}
		for i, l := range s.lines {
			exp := int64(i + 1)
			if i >= tc.n {
				exp = int64(i - tc.n + 1)
			}
			if l != exp {
				t.Fatalf("%+v: record %d has line %d, want %d", tc, i, l, exp)
			}
		}
		if s.devMax > 1e-9 {
			t.Errorf("%+v: points on the surface deviate by up to %g m", tc, s.devMax)
		}
		rej := 0
		for i := 0; i < tc.n; i++ {
			if i%13 == 0 {
				rej++
			}
		}
		for i := 0; i < tc.n/2; i++ {
			if i%13 == 0 {
				rej++
			}
		}
		if s.statusN[StatusRejected] != rej {
			t.Errorf("%+v: %d rejected, want %d", tc, s.statusN[StatusRejected], rej)
		}
	}
}

// TestRunErrors: a reading error is returned with its source; a sink error
// stops the run; neither hangs.
func TestRunErrors(t *testing.T) {
	d, err := ParseDesign("stream.yaml", []byte(streamDesign), ".")
	if err != nil {
		t.Fatal(err)
	}
	err = Run([]Input{{Reader: &fakeReader{n: 100}, Source: 0}, {Reader: &fakeReader{n: 10000, failAt: 500}, Source: 1}}, d,
		[]Sink{&orderSink{}}, RunOptions{Workers: 3, ChunkSize: 16})
	var se *SourceError
	if !errors.As(err, &se) || se.Source != 1 {
		t.Errorf("got %v, want a SourceError of input 1", err)
	}
	err = Run([]Input{{Reader: &fakeReader{n: 10000}, Source: 0}}, d, []Sink{&orderSink{failAt: 3}}, RunOptions{Workers: 3, ChunkSize: 16})
	if err == nil || err.Error() != "sink full" {
		t.Errorf("got %v, want the sink's error", err)
	}
}

// batchPatch wraps a patch as a BatchSurface that projects one by one, to
// check that the batch path gives Classify's answers exactly.
type batchPatch struct{ Surface }

func (b batchPatch) ProjectAll(dst []Projection, pts []r3.Vec) {
	for i, p := range pts {
		dst[i] = b.Project(p)
	}
}

// TestBatchPathMatchesClassify: for a one-patch design whose surface can
// project in batches, the pipeline's batch path gives exactly the status,
// patch and deviation that Classify gives point by point.
func TestBatchPathMatchesClassify(t *testing.T) {
	d, err := ParseDesign("stream.yaml", []byte(strings.Replace(streamDesign, "limit_mm: 10", "limit_mm: 10\n  far_mm: 50", 1)), ".")
	if err != nil {
		t.Fatal(err)
	}
	d.OffsetM = 0.004
	var c cloud.Chunk
	for i := 0; i < 3000; i++ {
		x, y := -2+14*float64(i%61)/60, -2+14*float64(i%53)/52
		z := 0.02*x*y + 0.2*(float64(i%17)/16-0.5)
		c.P = append(c.P, r3.Vec{X: x, Y: y, Z: z})
		c.Line = append(c.Line, int64(i+1))
		rej := ""
		if i%101 == 0 {
			rej = "bad"
		}
		c.Reject = append(c.Reject, rej)
	}
	want := Measure(d, &c)
	b := *d
	b.Patches = []Patch{d.Patches[0]}
	b.Patches[0].Surface = batchPatch{d.Patches[0].Surface}
	got := Measure(&b, &c)
	seen := map[Status]int{}
	for i := range c.P {
		seen[want.Status[i]]++
		if got.Status[i] != want.Status[i] || got.Patch[i] != want.Patch[i] ||
			!(got.Dev[i] == want.Dev[i] || math.IsNaN(got.Dev[i]) && math.IsNaN(want.Dev[i])) {
			t.Fatalf("record %d: batch (%v, %d, %g), Classify (%v, %d, %g)", i, got.Status[i], got.Patch[i], got.Dev[i], want.Status[i], want.Patch[i], want.Dev[i])
		}
	}
	for _, st := range []Status{StatusUsed, StatusFar, StatusOutside, StatusRejected} {
		if seen[st] == 0 {
			t.Errorf("the fixture should exercise status %v", st)
		}
	}
}

// TestFastPathMatchesClassify: one-patch analytic designs (corners and
// saddle forms) measured through the pipeline's fast path give exactly
// Classify's status, patch, deviation and normal for every point.
func TestFastPathMatchesClassify(t *testing.T) {
	saddleDesign := strings.Replace(streamDesign, "    corners: [[0, 0, 0], [10, 0, 0], [10, 10, 2], [0, 10, 0]]",
		"    saddle: {k1: 0.01, k2: -0.01, origin: [5, 5, 0.5], axes: [[0.7071067811865476, 0.7071067811865476, 0], [-0.7071067811865476, 0.7071067811865476, 0], [0, 0, 1]]}\n    corners: [[0, 0, 0], [10, 0, 0], [10, 10, 2], [0, 10, 0]]", 1)
	for name, text := range map[string]string{"corners": streamDesign, "saddle": saddleDesign} {
		t.Run(name, func(t *testing.T) {
			d, err := ParseDesign("stream.yaml", []byte(strings.Replace(text, "limit_mm: 10", "limit_mm: 10\n  far_mm: 50", 1)), ".")
			if err != nil {
				t.Fatal(err)
			}
			d.OffsetM = 0.004
			if _, ok := d.Patches[0].Surface.(measurer); !ok {
				t.Fatalf("%s patch has no fast path", d.Patches[0].Kind)
			}
			var c cloud.Chunk
			for i := 0; i < 4000; i++ {
				x, y := -2+14*float64(i%61)/60, -2+14*float64(i%53)/52
				z := 0.02*x*y + 0.3*(float64(i%17)/16-0.5)
				c.P = append(c.P, r3.Vec{X: x, Y: y, Z: z})
				c.Line = append(c.Line, int64(i+1))
				rej := ""
				if i%101 == 0 {
					rej = "bad"
				}
				c.Reject = append(c.Reject, rej)
			}
			got := Measure(d, &c)
			seen := map[Status]int{}
			for i, p := range c.P {
				if c.Reject[i] != "" {
					if got.Status[i] != StatusRejected {
						t.Fatalf("record %d: status %v, want rejected", i, got.Status[i])
					}
					seen[StatusRejected]++
					continue
				}
				k, pr, st := d.Classify(p)
				seen[st]++
				if got.Status[i] != st || int(got.Patch[i]) != k || got.Dev[i] != pr.D || got.Normal[i] != pr.Normal {
					t.Fatalf("record %d: fast (%v, %d, %g, %v), Classify (%v, %d, %g, %v)", i, got.Status[i], got.Patch[i], got.Dev[i], got.Normal[i], st, k, pr.D, pr.Normal)
				}
			}
			for _, st := range []Status{StatusUsed, StatusFar, StatusOutside, StatusRejected} {
				if seen[st] == 0 {
					t.Errorf("the fixture should exercise status %v", st)
				}
			}
		})
	}
}
