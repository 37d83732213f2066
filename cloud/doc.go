// Package cloud reads measured point sets: total-station shot files, scans and
// other survey exports, streamed in chunks of consecutive records.
//
// Units: every coordinate a reader hands out is in metres, float64, in the
// site frame of the input file (after the file's unit has been applied). No
// reader ever stores site coordinates in float32. Geometry code subtracts a
// local origin before any algebra; readers keep the values exactly as given.
//
// A record that cannot be read (non-numeric, missing field, NaN/Inf, out of
// range) is never dropped: it keeps its place in the chunk with a non-empty
// reason in Chunk.Reject, so that every input record can be reported back
// with its source line or record number.
//
// Formats live in this package (delimited text, PLY) and in sub-packages
// (cloud/las, cloud/e57) that register themselves with RegisterFormat, in the
// manner of image.RegisterFormat; Open sniffs the content, not the extension.
package cloud
