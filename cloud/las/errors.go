package las

import "fmt"

// FormatError reports a malformed LAS file at a byte offset.
type FormatError struct {
	Offset int64  // byte offset in the file where the problem is
	Msg    string // what is wrong there
	Err    error  // underlying cause such as io.ErrUnexpectedEOF, or nil
}

func (e *FormatError) Error() string {
	if e.Err != nil {
		return fmt.Sprintf("las: byte %d: %s: %v", e.Offset, e.Msg, e.Err)
	}
	return fmt.Sprintf("las: byte %d: %s", e.Offset, e.Msg)
}

// Unwrap returns the underlying cause.
func (e *FormatError) Unwrap() error { return e.Err }

// UnsupportedError reports a valid LAS feature this reader does not handle,
// such as LAZ compression.
type UnsupportedError struct {
	Offset  int64  // byte offset of the field that names the feature
	Feature string // e.g. "LAZ compression", "point data record format 11"
	Hint    string // what the user can do, or ""
}

func (e *UnsupportedError) Error() string {
	s := fmt.Sprintf("las: byte %d: unsupported %s", e.Offset, e.Feature)
	if e.Hint != "" {
		s += "; " + e.Hint
	}
	return s
}
