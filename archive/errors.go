package archive

import (
	"errors"
	"fmt"
)

// Sentinel errors for errors.Is.
var (
	// ErrNotArchive means the folder holds no archive.db.
	ErrNotArchive = errors.New("archive: not an archive folder (no archive.db); create one with init")
	// ErrExists means Init found an archive already.
	ErrExists = errors.New("archive: an archive already exists here")
	// ErrNewerSchema means the database was written by a newer version of
	// the tool.
	ErrNewerSchema = errors.New("archive: the database schema is newer than this tool")
	// ErrNotFound means no structure, epoch or result matched.
	ErrNotFound = errors.New("archive: not found")
	// ErrDuplicateStructure means a structure of that name exists.
	ErrDuplicateStructure = errors.New("archive: a structure of that name exists")
	// ErrInvalid marks a bad field value (date, datum kind, negative σ, …).
	ErrInvalid = errors.New("archive: invalid value")
	// ErrCorrupt means an object's content no longer matches its hash.
	ErrCorrupt = errors.New("archive: object content does not match its hash")
)

// DuplicateError is returned by AddEpoch when the points file is already
// archived (same SHA-256).
type DuplicateError struct {
	Hash      string
	Epoch     int64  // the existing epoch
	Structure string // its structure's name
	Date      string // its date
}

func (e *DuplicateError) Error() string {
	return fmt.Sprintf("archive: this points file is already archived as epoch %d of %q (%s), sha256 %s", e.Epoch, e.Structure, e.Date, e.Hash)
}

// FieldError names the field whose value is invalid.
type FieldError struct {
	Field string
	Value string
	Err   error
	Hint  string
}

func (e *FieldError) Error() string {
	s := fmt.Sprintf("archive: %s %q: %v", e.Field, e.Value, e.Err)
	if e.Hint != "" {
		s += " (" + e.Hint + ")"
	}
	return s
}

func (e *FieldError) Unwrap() error { return e.Err }
