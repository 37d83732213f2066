package cloud

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strings"

	"gonum.org/v1/gonum/spatial/r3"
)

// sniffLen is how many leading bytes Open looks at.
const sniffLen = 4096

// Open opens the point file at path and returns a streaming reader for it.
// The format is decided by content, from the first 4096 bytes: registered
// formats (RegisterFormat) first, then PLY (magic line "ply"), then
// delimited text. A file that looks binary and matches none of them gives a
// *FormatError wrapping ErrUnknownFormat.
func Open(path string, opt Options) (Reader, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	head := make([]byte, sniffLen)
	n, err := io.ReadFull(f, head)
	f.Close()
	if err != nil && err != io.ErrUnexpectedEOF && err != io.EOF {
		return nil, err
	}
	head = head[:n]
	for _, fm := range formats {
		if fm.Match != nil && fm.Match(head) {
			return fm.Open(path, opt)
		}
	}
	if isPLY(head) {
		return OpenPLY(path, opt)
	}
	if n == 0 {
		return nil, &FormatError{Path: path, Msg: "empty file", Err: ErrUnknownFormat}
	}
	if bytes.HasPrefix(head, []byte{0xff, 0xfe}) || bytes.HasPrefix(head, []byte{0xfe, 0xff}) {
		return nil, &FormatError{Path: path, Msg: "UTF-16 text (byte-order mark " + fmt.Sprintf("% x", head[:2]) + "): export or save the file as UTF-8", Err: ErrUnknownFormat}
	}
	if off := binaryOffset(head); off >= 0 {
		names := []string{}
		for _, fm := range formats {
			names = append(names, fm.Name)
		}
		names = append(names, "PLY", "delimited text")
		return nil, &FormatError{Path: path, Offset: int64(off),
			Msg: fmt.Sprintf("binary content that is none of %s", strings.Join(names, ", ")),
			Err: ErrUnknownFormat}
	}
	return OpenCSV(path, opt)
}

// binaryOffset returns the offset of the first byte that text does not
// hold (NUL or another control character than tab, CR, LF, FF), or -1.
// Bytes of 0x80 and above pass: besides UTF-8 they may be text in a legacy
// code page (Latin-1 codes in a total-station export).
func binaryOffset(head []byte) int {
	for i, c := range head {
		if c < 0x20 && c != '\t' && c != '\n' && c != '\r' && c != '\f' || c == 0x7f {
			return i
		}
	}
	return -1
}

// Summary is what Scan learns by reading a whole file.
type Summary struct {
	// Info is the reader's Info after the last record, so that it includes
	// warnings found while reading.
	Info Info
	// Count is the number of records read, Rejected the number of them
	// with a reject reason.
	Count, Rejected int64
	// Min and Max bound the accepted points, in metres. Both are the zero
	// vector when no point was accepted.
	Min, Max r3.Vec
	// DuplicateIDs counts records whose id appeared earlier in the file
	// (0 for formats without ids). Beyond MaxTrackedIDs distinct ids the
	// count stops growing.
	DuplicateIDs int64
}

// Scan reads r to the end and summarises it. It does not close r.
func Scan(r Reader) (Summary, error) {
	var s Summary
	var c Chunk
	var ids idSet
	s.Min = r3.Vec{X: math.Inf(1), Y: math.Inf(1), Z: math.Inf(1)}
	s.Max = r3.Vec{X: math.Inf(-1), Y: math.Inf(-1), Z: math.Inf(-1)}
	for {
		err := r.Read(&c, 0)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			s.Info = r.Info()
			return s, err
		}
		s.Count += int64(c.Len())
		for i, p := range c.P {
			if c.Reject[i] != "" {
				s.Rejected++
				continue
			}
			s.Min = r3.Vec{X: math.Min(s.Min.X, p.X), Y: math.Min(s.Min.Y, p.Y), Z: math.Min(s.Min.Z, p.Z)}
			s.Max = r3.Vec{X: math.Max(s.Max.X, p.X), Y: math.Max(s.Max.Y, p.Y), Z: math.Max(s.Max.Z, p.Z)}
		}
		if _, counted := r.(dupCounter); !counted && c.ID != nil {
			ids.reserve(len(c.ID))
			for i, id := range c.ID {
				if _, dup := ids.add(id, c.Line[i]); dup {
					s.DuplicateIDs++
				}
			}
		}
	}
	if d, ok := r.(dupCounter); ok {
		s.DuplicateIDs = d.duplicateIDs()
	}
	if s.Count == s.Rejected {
		s.Min, s.Max = r3.Vec{}, r3.Vec{}
	}
	s.Info = r.Info()
	return s, nil
}

// dupCounter is implemented by readers that count repeated ids
// themselves, so that Scan need not do it twice.
type dupCounter interface{ duplicateIDs() int64 }

// MaxTrackedIDs bounds the memory of duplicate-id detection: after this many
// distinct ids, further ids are only checked against those kept (16 bytes
// per slot, at most three quarters full: 64 MiB at 2^21 ids).
const MaxTrackedIDs = 1 << 21

// idSet detects repeated point ids in bounded memory. It keeps a 64-bit
// FNV-1a hash of each id with the line it was first seen on, in an
// open-addressing table with linear probing (at most 3/4 full), so two different ids collide
// with probability about n²/2⁶⁵ (3e-8 at 10^6 ids), an accepted risk for a
// warning.
type idSet struct {
	keys  []uint64 // 0 marks an empty slot
	lines []int64
	n     int
	full  bool
}

// add records id, seen on line, and reports the line it was first seen on
// and whether it is a repeat.
func (s *idSet) add(id string, line int64) (int64, bool) {
	h := fnv64(id) | 1 // never 0, the empty mark
	if 4*(s.n+1) > 3*len(s.keys) {
		if s.n >= MaxTrackedIDs {
			if l, ok := s.find(h); ok {
				return l, true
			}
			s.full = true
			return 0, false
		}
		s.rehash(max(1<<14, 2*len(s.keys)))
	}
	mask := len(s.keys) - 1
	for i := int(h>>32) & mask; ; i = (i + 1) & mask {
		switch s.keys[i] {
		case h:
			return s.lines[i], true
		case 0:
			s.keys[i], s.lines[i] = h, line
			s.n++
			return 0, false
		}
	}
}

// clear empties s, keeping its table for reuse.
func (s *idSet) clear() {
	clear(s.keys)
	s.n, s.full = 0, false
}

// reserve sizes the table for n more ids at once, saving the rehashes of
// growing to it step by step.
func (s *idSet) reserve(n int) {
	want := 1 << 14
	for 3*want < 4*(s.n+n) && want < 4*MaxTrackedIDs {
		want *= 2
	}
	if want > len(s.keys) {
		s.rehash(want)
	}
}

func (s *idSet) find(h uint64) (int64, bool) {
	mask := len(s.keys) - 1
	for i := int(h>>32) & mask; s.keys[i] != 0; i = (i + 1) & mask {
		if s.keys[i] == h {
			return s.lines[i], true
		}
	}
	return 0, false
}

func (s *idSet) rehash(size int) {
	keys, lines := s.keys, s.lines
	s.keys, s.lines = make([]uint64, size), make([]int64, size)
	mask := size - 1
	for j, h := range keys {
		if h == 0 {
			continue
		}
		i := int(h>>32) & mask
		for s.keys[i] != 0 {
			i = (i + 1) & mask
		}
		s.keys[i], s.lines[i] = h, lines[j]
	}
}

// fnv64 is the 64-bit FNV-1a hash (Fowler, Noll, Vo; constants from the
// FNV reference, also in Go's hash/fnv).
func fnv64(s string) uint64 {
	h := uint64(14695981039346656037)
	for i := 0; i < len(s); i++ {
		h ^= uint64(s[i])
		h *= 1099511628211
	}
	return h
}

// isPLY reports whether head starts with the PLY magic line.
func isPLY(head []byte) bool {
	if !bytes.HasPrefix(head, []byte("ply")) {
		return false
	}
	rest := bytes.TrimLeft(head[3:], " \t")
	return len(rest) > 0 && (rest[0] == '\n' || rest[0] == '\r')
}
