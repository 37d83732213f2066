package deviation

import (
	"errors"
	"io"
	"math"
	"runtime"
	"sync"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/cloud"
	"saddlecheck/uncert"
)

// Result is the outcome of measuring one chunk of input records. All slices
// are parallel to Chunk's records; a Result and its Chunk are reused once
// every Sink has consumed them, so a Sink must copy what it keeps.
type Result struct {
	Chunk *cloud.Chunk
	// Patch is the index into Design.Patches of the patch a point belongs
	// to, or -1 (outside, rejected).
	Patch []int32
	// Dev is the deviation in metres after the design offset, positive on
	// the normal side; NaN for rejected records. For outside points it is
	// the deviation from the nearest patch surface, for information only.
	Dev []float64
	// Normal is the unit design normal at the closest point (zero for
	// rejected records).
	Normal []r3.Vec
	Status []Status
	// U is the standard uncertainty of Dev in metres, filled by an
	// Enricher; nil when no uncertainty model is given.
	U []float64
	// Budget holds the uncertainty budget of a sample of the chunk's points
	// (see BudgetEvery); nil without an uncertainty model.
	Budget *uncert.BudgetStats
	// Resid is the residual in metres from the as-built (fitted) surface of
	// the point's patch; nil when no fit was made, NaN where the patch has
	// no fit.
	Resid []float64
	// Outlier marks points the as-built fit classes as outliers; nil when no
	// fit was made.
	Outlier []bool
	// Seq is the 0-based sequence number of the chunk over all inputs.
	Seq int
	// proj and inside are scratch for batch projection (see BatchSurface).
	proj   []Projection
	inside []bool
	// Encoded holds output bytes that encoders running as Enrichers (on
	// the workers, in parallel) prepared for their sinks, one slot per
	// encoder (see NextSlot); the sink then only writes them, in order.
	Encoded [MaxSlots][]byte
}

// MaxSlots is the number of Result.Encoded slots.
const MaxSlots = 4

func (r *Result) reset(n int) {
	r.Patch = resize(r.Patch, n)
	r.Dev = resize(r.Dev, n)
	r.Normal = resize(r.Normal, n)
	r.Status = resize(r.Status, n)
	if r.U != nil {
		r.U = resize(r.U, n)
	}
	if r.Resid != nil {
		r.Resid = resize(r.Resid, n)
	}
	if r.Outlier != nil {
		r.Outlier = resize(r.Outlier, n)
	}
}

func resize[T any](s []T, n int) []T {
	if cap(s) >= n {
		return s[:n]
	}
	return make([]T, n)
}

// Sink consumes results in input order, from one goroutine.
type Sink interface {
	Consume(r *Result) error
}

// Enricher adds per-point quantities to a classified result (uncertainty,
// as-built residuals). It runs on the worker goroutines, concurrently for
// different chunks, and must not allocate per point.
type Enricher interface {
	// Prepare sizes the optional slices of r it fills (e.g. r.U) for n
	// records.
	Prepare(r *Result, n int)
	Enrich(r *Result)
}

// RunOptions control Run. The zero value means: all cores, DefaultChunk
// records per chunk, no enrichment, no progress reports.
type RunOptions struct {
	Workers   int
	ChunkSize int
	Enrich    []Enricher
	// Progress, when set, is called from the ordered sink goroutine after
	// each chunk with the running count of records.
	Progress func(records int64)
}

// Input is one opened points file.
type Input struct {
	Reader cloud.Reader
	// Source is the file's index among the inputs (copied into every
	// chunk's Source).
	Source int
}

// SourceError wraps a reading error with the index of the input it came
// from.
type SourceError struct {
	Source int
	Err    error
}

func (e *SourceError) Error() string { return e.Err.Error() }
func (e *SourceError) Unwrap() error { return e.Err }

// Run streams every record of the inputs, in order, through the design's
// classification and the enrichers (in parallel over Workers goroutines),
// and hands the results to the sinks in input order. Memory stays bounded
// by a few chunks per worker, whatever the size of the inputs.
//
// A reading error stops the run and is returned as a *SourceError; a sink
// error stops the run and is returned as is.
func Run(inputs []Input, d *Design, sinks []Sink, opt RunOptions) error {
	workers := opt.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	size := opt.ChunkSize
	if size <= 0 {
		size = cloud.DefaultChunk
	}
	type job struct{ r *Result }
	nbuf := 2*workers + 2
	free := make(chan *Result, nbuf)
	for i := 0; i < nbuf; i++ {
		free <- &Result{Chunk: &cloud.Chunk{}}
	}
	todo := make(chan *Result, nbuf)
	done := make(chan *Result, nbuf)
	stop := make(chan struct{})
	var stopOnce sync.Once
	halt := func() { stopOnce.Do(func() { close(stop) }) }

	// Reader: one goroutine, files in order.
	var readErr error
	go func() {
		defer close(todo)
		seq := 0
		for _, in := range inputs {
			for {
				var r *Result
				select {
				case r = <-free:
				case <-stop:
					return
				}
				err := in.Reader.Read(r.Chunk, size)
				if err == io.EOF {
					free <- r
					break
				}
				if err != nil {
					readErr = &SourceError{Source: in.Source, Err: err}
					free <- r
					halt()
					return
				}
				r.Chunk.Source = in.Source
				r.Seq = seq
				seq++
				select {
				case todo <- r:
				case <-stop:
					return
				}
			}
		}
	}()

	// Workers.
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for r := range todo {
				measure(d, r, opt.Enrich)
				select {
				case done <- r:
				case <-stop:
					return
				}
			}
		}()
	}
	go func() { wg.Wait(); close(done) }()

	// Ordered consumer (this goroutine).
	pending := map[int]*Result{}
	next := 0
	var sinkErr error
	var records int64
	for r := range done {
		if sinkErr != nil {
			continue
		}
		pending[r.Seq] = r
		for {
			q, ok := pending[next]
			if !ok {
				break
			}
			delete(pending, next)
			next++
			for _, s := range sinks {
				if err := s.Consume(q); err != nil {
					sinkErr = err
					halt()
					break
				}
			}
			records += int64(q.Chunk.Len())
			if opt.Progress != nil && sinkErr == nil {
				opt.Progress(records)
			}
			free <- q
			if sinkErr != nil {
				break
			}
		}
	}
	switch {
	case readErr != nil:
		return readErr
	case sinkErr != nil:
		return sinkErr
	}
	if len(pending) != 0 {
		return errors.New("deviation: internal error: chunks left unordered")
	}
	return nil
}

// BatchSurface is a Surface that projects many points at once faster than
// one by one (the mesh visits them in an order that shares its hierarchy
// in cache). ProjectAll must give exactly Project's answers.
type BatchSurface interface {
	Surface
	ProjectAll(dst []Projection, pts []r3.Vec)
}

// measure classifies every record of r.Chunk against the design and runs
// the enrichers.
func measure(d *Design, r *Result, enrich []Enricher) {
	c := r.Chunk
	n := c.Len()
	for _, e := range enrich {
		e.Prepare(r, n)
	}
	r.reset(n)
	if len(d.Patches) == 1 {
		if bs, ok := d.Patches[0].Surface.(BatchSurface); ok {
			measureBatch(d, bs, r)
			for _, e := range enrich {
				e.Enrich(r)
			}
			return
		}
	}
	nan := math.NaN()
	for i := 0; i < n; i++ {
		if c.Reject[i] != "" {
			r.Patch[i] = -1
			r.Dev[i] = nan
			r.Normal[i] = r3.Vec{}
			r.Status[i] = StatusRejected
			continue
		}
		k, pr, st := d.Classify(c.P[i])
		r.Patch[i] = int32(k)
		r.Dev[i] = pr.D
		r.Normal[i] = pr.Normal
		r.Status[i] = st
	}
	for _, e := range enrich {
		e.Enrich(r)
	}
}

// measureBatch is measure for a design of one batch-capable patch. It gives
// exactly Classify's answers for one patch: inside → used or far by
// |D − offset|, else outside with the patch's own distance.
func measureBatch(d *Design, bs BatchSurface, r *Result) {
	c := r.Chunk
	n := c.Len()
	far := d.Tolerance.FarM
	if far == 0 {
		far = DefaultFarM
	}
	nan := math.NaN()
	if m, ok := bs.(measurer); ok {
		// rejected records carry the zero point; measuring it is harmless
		r.inside = resize(r.inside, n)
		m.measureAll(r.Dev, r.Normal, r.inside, c.P)
		for i := 0; i < n; i++ {
			if c.Reject[i] != "" {
				r.Patch[i], r.Dev[i], r.Normal[i], r.Status[i] = -1, nan, r3.Vec{}, StatusRejected
				continue
			}
			dev := r.Dev[i] - d.OffsetM
			r.Dev[i] = dev
			switch {
			case !r.inside[i]:
				r.Patch[i], r.Status[i] = -1, StatusOutside
			case math.Abs(dev) > far:
				r.Patch[i], r.Status[i] = 0, StatusFar
			default:
				r.Patch[i], r.Status[i] = 0, StatusUsed
			}
		}
		return
	}
	r.proj = resize(r.proj, n)
	bs.ProjectAll(r.proj, c.P)
	for i := 0; i < n; i++ {
		if c.Reject[i] != "" {
			r.Patch[i], r.Dev[i], r.Normal[i], r.Status[i] = -1, nan, r3.Vec{}, StatusRejected
			continue
		}
		pr := &r.proj[i]
		dev := pr.D - d.OffsetM
		r.Dev[i], r.Normal[i] = dev, pr.Normal
		switch {
		case !pr.Inside:
			r.Patch[i], r.Status[i] = -1, StatusOutside
		case math.Abs(dev) > far:
			r.Patch[i], r.Status[i] = 0, StatusFar
		default:
			r.Patch[i], r.Status[i] = 0, StatusUsed
		}
	}
}

// Measure is Run's per-chunk step for callers that hold a chunk in hand
// (tests, small in-memory sets).
func Measure(d *Design, c *cloud.Chunk, enrich ...Enricher) *Result {
	r := &Result{Chunk: c}
	measure(d, r, enrich)
	return r
}
