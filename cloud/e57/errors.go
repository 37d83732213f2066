package e57

import "fmt"

// FormatError reports a malformed E57 file at a physical byte offset.
type FormatError struct {
	Offset int64  // physical byte offset where the problem is, or -1 if unknown
	Msg    string // what is wrong
	Err    error  // underlying cause such as io.ErrUnexpectedEOF, or nil
}

func (e *FormatError) Error() string {
	s := fmt.Sprintf("e57: byte %d: %s", e.Offset, e.Msg)
	if e.Err != nil {
		s += ": " + e.Err.Error()
	}
	return s
}

// Unwrap returns the underlying cause.
func (e *FormatError) Unwrap() error { return e.Err }

// ChecksumError reports a page whose stored CRC-32C does not match its
// 1020 data bytes: the file is corrupt.
type ChecksumError struct {
	Page     int64  // 0-based page index
	Offset   int64  // physical offset of the page, Page·1024
	Stored   uint32 // checksum stored in the page's last 4 bytes (big-endian)
	Computed uint32 // CRC-32C of the page's first 1020 bytes
}

func (e *ChecksumError) Error() string {
	return fmt.Sprintf("e57: page %d (byte %d): checksum mismatch, stored 0x%08x, computed 0x%08x: the file is corrupt", e.Page, e.Offset, e.Stored, e.Computed)
}

// UnsupportedError reports a valid E57 feature this reader does not handle.
type UnsupportedError struct {
	Offset  int64  // physical offset of the element or field, or -1
	Feature string // what is not supported
}

func (e *UnsupportedError) Error() string {
	return fmt.Sprintf("e57: byte %d: unsupported %s", e.Offset, e.Feature)
}
