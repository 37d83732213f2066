package mesh

import "errors"

// Sentinel errors; the functions of this package wrap them with details
// (use errors.Is).
var (
	// ErrEmpty means no usable (non-degenerate) triangle is left.
	ErrEmpty = errors.New("mesh: no usable triangles")
	// ErrIndex means a triangle refers to a vertex that does not exist.
	ErrIndex = errors.New("mesh: vertex index out of range")
	// ErrNonFinite means a vertex coordinate is NaN or infinite.
	ErrNonFinite = errors.New("mesh: non-finite vertex coordinate")
	// ErrNonOrientable means the triangles cannot be given a consistent
	// winding (a Möbius-like component): no signed distance exists.
	ErrNonOrientable = errors.New("mesh: surface is not orientable")
	// ErrUnit means the unit factor is not a positive finite number.
	ErrUnit = errors.New("mesh: unit must be a positive finite number of metres")
	// ErrChord means a chord tolerance is not a positive finite number or
	// cannot be reached within the grid limit.
	ErrChord = errors.New("mesh: chord tolerance not positive or not reachable")
)

// ErrPrecision means float32 storage would lose more than 0.1 mm.
var ErrPrecision = errors.New("mesh: float32 coordinates would lose more than 0.1 mm")
