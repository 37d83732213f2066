// Package las reads ASPRS LAS point files, versions 1.0 to 1.4, point data
// record formats 0 to 10, and streams them as cloud.Chunk records.
//
// Coordinates: every record's integers are scaled in float64 exactly as the
// specification defines them,
//
//	X = X_record · X_scale + X_offset   (likewise Y, Z)
//
// and handed out as r3.Vec{X, Y, Z} in the unit of the file's coordinate
// reference system, which for site work is usually the metre. The LAS file
// does not say its unit outside the CRS, so the reader passes the values
// through as metres unless the caller set Options.Unit to a non-metre unit
// (mm, ft, us-ft); then every coordinate is multiplied by that unit's size in
// metres after scaling. A CRS whose GeoTIFF ProjLinearUnits key says feet
// while the caller gave no unit raises a warning in Info.
//
// Records: Chunk.ID is nil; Chunk.Line holds the 1-based record number, which
// is the point id. Attributes are kept as float64 slices named intensity,
// return_number, number_of_returns, classification and, for formats with a
// time field (1, 3–10), gps_time. Extra bytes beyond the format's standard
// record length are skipped. Waveform packets (formats 4, 5, 9, 10) are not
// read.
//
// Compressed LAZ files (point format byte with bit 7 set, or a laszip VLR)
// are refused with an *UnsupportedError: decompress them to LAS first.
//
// Speed: Open maps the file into memory where the system allows (unix
// mmap), so records are decoded straight from the page cache without a
// copy; elsewhere, and for NewReader, records are read in large blocks with
// ReadAt. Decoding allocates nothing per point. A mapped file truncated by
// another program while it is read gives a *FormatError, not a crash.
//
// Errors: a malformed file gives a *FormatError naming the byte offset; a
// feature this reader does not handle gives an *UnsupportedError.
//
// Sign convention: none beyond the file's own axes (X easting, Y northing,
// Z elevation in the usual projected CRS).
//
// References:
//   - ASPRS, LAS Specification 1.4 – R15 (2019), public header block,
//     variable length records, point data record formats 0–10.
//   - ASPRS, LAS Specification 1.2 (2008), public header block of 227 bytes.
//   - GeoTIFF Format Specification 1.0 (1995), GeoKeyDirectoryTag.
package las
