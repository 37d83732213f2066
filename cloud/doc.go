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
// # Delimited text (total-station shot files, XYZ)
//
// The separator is the one of tab, semicolon or comma found (outside
// quotes) in every one of the first 20 data lines, else runs of blanks.
// With a semicolon or tab separator a comma inside a number is its decimal
// mark (12,345). Lines whose first non-blank byte is # and blank lines are
// skipped; a UTF-8 byte-order mark and CRLF line ends are accepted; a
// field in double quotes may hold the separator ("" is one quote). Text in
// a legacy code page (Latin-1 codes) is read byte for byte with a warning;
// UTF-16 is refused with a request for UTF-8.
//
// A first line without any number is a header. Its names are matched
// case-insensitively, ignoring a trailing unit such as "(m)":
//
//	id:   point pt id name pointid point_id
//	e:    e east easting x
//	n:    n north northing y
//	z:    z h elev elevation height rl
//	code: code desc description remark
//
// Columns map to (E, N, Z) = (x, y, z) by name, whatever their order, so
// northing-before-easting files read correctly; a header saying x/y gives
// a warning that x was taken as the easting, and a unit in a coordinate's
// name ("East (ft)") that differs from Options.Unit gives a warning too
// (the unit is never taken from the file). Other columns are numeric
// attributes (Chunk.Attr). A headerless file needs Options.Columns (such as
// id,n,e,z,code; "-" skips a column), because the order of northing and
// easting cannot be guessed, except a file of only numbers whose first
// column is not all whole numbers (point ids): that is plain
// XYZ, x,y,z followed by attributes named col4, col5, …
//
// A row that cannot be read is kept with its reason in Chunk.Reject: a
// non-numeric or missing coordinate or id, NaN/Inf, |v| > MaxCoord after the
// unit. If more than half of the data rows are rejected, the final Read
// returns a *ParseError wrapping ErrTooManyRejected. Repeated point ids are
// kept and reported in Info.Warnings.
//
// # PLY
//
// ascii, binary_little_endian and binary_big_endian, version 1.0, every
// scalar type and its sized alias. The vertex element's x, y, z become
// Chunk.P and its other scalar properties Chunk.Attr; list properties and
// other elements, before or after the vertex element, are skipped.
// Chunk.Line is the 1-based vertex number. A header whose counts need more
// bytes than the file holds, and a body that ends early, give a
// *FormatError with the byte offset. float32 coordinates beyond 1e4 m give
// a warning: float32 spacing is 0.031 m at 5×10^5 m. PLYWriter writes
// binary little-endian PLY of double x, y, z, float extras and optional
// uchar colour, patching the vertex count on Close.
//
// Formats live in this package (delimited text, PLY) and in sub-packages
// (cloud/las, cloud/e57) that register themselves with RegisterFormat, in the
// manner of image.RegisterFormat; Open sniffs the content, not the extension.
package cloud
