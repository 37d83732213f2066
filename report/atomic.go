package report

import (
	"bufio"
	"fmt"
	"os"
	"path/filepath"
)

// File is an output file written under a temporary name and renamed to its
// final name by Commit. Abort (or a crash) leaves no file at the final name.
type File struct {
	*bufio.Writer
	f     *os.File
	final string
	done  bool
}

// Create opens a temporary file beside path for writing.
func Create(path string) (*File, error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+".tmp-*")
	if err != nil {
		return nil, err
	}
	return &File{Writer: bufio.NewWriterSize(f, 1<<20), f: f, final: path}, nil
}

// Commit flushes, syncs and closes the file and renames it to its final
// name.
func (w *File) Commit() error {
	if w.done {
		return fmt.Errorf("report: %s committed twice", w.final)
	}
	w.done = true
	if err := finishTemp(w.f, w.final, w.Flush()); err != nil {
		return fmt.Errorf("writing %s: %w", w.final, err)
	}
	return nil
}

// finishTemp completes a temporary file f: unless err is already set it
// syncs and closes f, makes it readable by all (CreateTemp makes it 0600; a
// report is for sharing) and renames it to final. On any error the
// temporary file is removed.
func finishTemp(f *os.File, final string, err error) error {
	if err == nil {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Chmod(f.Name(), 0o644)
	}
	if err == nil {
		err = os.Rename(f.Name(), final)
	}
	if err != nil {
		os.Remove(f.Name())
	}
	return err
}

// Abort discards the file. It is a no-op after Commit.
func (w *File) Abort() {
	if w.done {
		return
	}
	w.done = true
	w.f.Close()
	os.Remove(w.f.Name())
}

// WriteFile writes data to path atomically.
func WriteFile(path string, data []byte) error {
	w, err := Create(path)
	if err != nil {
		return err
	}
	if _, err := w.Write(data); err != nil {
		w.Abort()
		return err
	}
	return w.Commit()
}
