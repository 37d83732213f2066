// Package e57 reads ASTM E2807 (E57) 3D imaging files and streams their
// point records, from every scan, as cloud.Chunk records in one frame.
//
// File layout (ASTM E2807-11, reapproved 2019): a 48-byte header
// ("ASTM-E57", version, physical length, XML physical offset and logical
// length, page size) and then 1024-byte physical pages, each carrying 1020
// data bytes followed by a CRC-32C (Castagnoli) of those bytes, stored
// big-endian (measured on the reference files; see testdata/README.md). The
// XML section describes the scans (e57Root → data3D → vectorChild); each
// scan's points live in a binary CompressedVector section of data packets,
// one bytestream per prototype field, integers bit-packed least significant
// bit first.
//
// Reading is streaming: the reader walks the data packets of one scan at a
// time and verifies each page's checksum the first time it reads it; a bad
// checksum is a *ChecksumError naming the page index and its physical
// offset. The binary section is never loaded whole: Open maps the file into
// memory where the system allows (unix mmap) and verifies and reads pages in
// place, 64 at a time; otherwise, and for NewReader, it reads them in blocks
// of 64 with ReadAt. A mapped file truncated by another program while it is
// read gives a *FormatError, not a crash.
//
// Coordinates are float64 metres (E57 stores metres by definition; the
// caller's Options.Unit is applied only if it is a non-metre unit). A
// scan's points are taken from cartesianX/Y/Z, or converted from
// sphericalRange/Azimuth/Elevation as the standard defines,
//
//	x = r·cos(el)·cos(az),  y = r·cos(el)·sin(az),  z = r·sin(el),
//
// and then moved into the file's frame by the scan's pose,
//
//	p' = R(q)·p + t,  q = (w, x, y, z) the unit rotation quaternion,
//
// so that all scans come out in one frame. A record whose
// cartesianInvalidState or sphericalInvalidState is not 0 is kept with a
// Reject reason. Chunk.ID is nil and Chunk.Line is the 1-based record
// number across all scans. Attributes: scan (1-based scan index), and where
// a prototype has them intensity, color_red, color_green, color_blue (NaN in
// a scan without the field).
//
// Errors: *FormatError (byte offset), *ChecksumError (page) and
// *UnsupportedError (a valid feature this reader does not handle).
//
// References:
//   - ASTM E2807-11 (2019), Standard Specification for 3D Imaging Data
//     Exchange, Version 1.0: the physical layer (pages, CRC-32C), the XML
//     elements (data3D, pose, cartesianBounds, points, prototype) and the
//     CompressedVector binary section with its packets. Clause numbers are
//     not cited here: they are from memory.
//   - RFC 3720 (iSCSI): the CRC-32C polynomial (its digest section, from
//     memory) and the check values of appendix B.4.
package e57
