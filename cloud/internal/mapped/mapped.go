// Package mapped opens a binary point file for the format readers of
// package cloud: the open file, its size, and — where the system allows
// (unix mmap) — its bytes mapped read-only, so records can be decoded
// straight from the page cache. Readers fall back to ReadAt when Data is
// nil.
package mapped

import "os"

// File is an opened, possibly mapped, file.
type File struct {
	*os.File
	Size int64
	// Data is the whole file mapped read-only, or nil.
	Data []byte
}

// Open opens and stats the file at path and maps it where it can.
func Open(path string) (*File, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	st, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, err
	}
	return &File{File: f, Size: st.Size(), Data: mapFile(f, st.Size())}, nil
}

// Close unmaps and closes the file. Data must not be used afterwards.
func (m *File) Close() error {
	var err error
	if m.Data != nil {
		err = unmapFile(m.Data)
		m.Data = nil
	}
	if cerr := m.File.Close(); err == nil {
		err = cerr
	}
	return err
}
