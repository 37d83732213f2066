package archive

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
)

// tmpPrefix names the temporary files of objects being written.
const tmpPrefix = ".tmp-"

// ObjectPath returns the path of the object with the given SHA-256 hex
// digest: DIR/objects/ab/cdef….
func (a *Archive) ObjectPath(hash string) string {
	return filepath.Join(a.dir, "objects", hash[:2], hash[2:])
}

// validHash reports whether h is 64 lower-case hex digits.
func validHash(h string) bool {
	if len(h) != 64 {
		return false
	}
	for _, c := range h {
		if !(c >= '0' && c <= '9' || c >= 'a' && c <= 'f') {
			return false
		}
	}
	return true
}

// putObject copies the file at src into the object store and returns its
// SHA-256 hex digest. The copy goes to a temporary file in the archive's
// objects folder, is hashed on the way, fsynced, and renamed to its final
// name; the folders are then fsynced so that the rename is durable before
// any row names the object. An object already present is kept as is.
func (a *Archive) putObject(src string) (string, error) {
	in, err := os.Open(src)
	if err != nil {
		return "", err
	}
	defer in.Close()
	objects := filepath.Join(a.dir, "objects")
	tmp, err := os.CreateTemp(objects, tmpPrefix+"*")
	if err != nil {
		return "", fmt.Errorf("archive: %w", err)
	}
	ok := false
	defer func() {
		if !ok {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	h := sha256.New()
	if _, err := io.Copy(io.MultiWriter(tmp, h), in); err != nil {
		return "", fmt.Errorf("archive: copying %s: %w", src, err)
	}
	if err := tmp.Sync(); err != nil {
		return "", fmt.Errorf("archive: %w", err)
	}
	if err := tmp.Close(); err != nil {
		return "", fmt.Errorf("archive: %w", err)
	}
	sum := hex.EncodeToString(h.Sum(nil))
	final := a.ObjectPath(sum)
	sub := filepath.Dir(final)
	if err := os.MkdirAll(sub, 0o755); err != nil {
		return "", fmt.Errorf("archive: %w", err)
	}
	if _, err := os.Stat(final); err == nil {
		os.Remove(tmp.Name())
		ok = true
		return sum, nil
	}
	if err := os.Rename(tmp.Name(), final); err != nil {
		return "", fmt.Errorf("archive: %w", err)
	}
	ok = true
	if err := syncDir(sub); err != nil {
		return "", err
	}
	if err := syncDir(objects); err != nil {
		return "", err
	}
	return sum, nil
}

func syncDir(dir string) error {
	d, err := os.Open(dir)
	if err != nil {
		return fmt.Errorf("archive: %w", err)
	}
	defer d.Close()
	if err := d.Sync(); err != nil && !isUnsupported(err) {
		return fmt.Errorf("archive: syncing %s: %w", dir, err)
	}
	return nil
}

// isUnsupported reports a directory fsync the platform refuses (some
// file systems return EINVAL); the rename is then as durable as it gets.
func isUnsupported(err error) bool {
	return strings.Contains(err.Error(), "invalid argument")
}

// Extract copies the object with the given hash to the file dst, checking
// its content against the hash (ErrCorrupt on mismatch; dst is then
// removed).
func (a *Archive) Extract(hash, dst string) error {
	if !validHash(hash) {
		return &FieldError{Field: "hash", Value: hash, Err: ErrInvalid}
	}
	in, err := os.Open(a.ObjectPath(hash))
	if err != nil {
		return fmt.Errorf("archive: object %s: %w", hash, err)
	}
	defer in.Close()
	out, err := os.Create(dst)
	if err != nil {
		return err
	}
	h := sha256.New()
	_, err = io.Copy(io.MultiWriter(out, h), in)
	if cerr := out.Close(); err == nil {
		err = cerr
	}
	if err == nil && hex.EncodeToString(h.Sum(nil)) != hash {
		err = fmt.Errorf("%w: %s", ErrCorrupt, hash)
	}
	if err != nil {
		os.Remove(dst)
		return err
	}
	return nil
}

// HashFile returns the SHA-256 hex digest of the file at path (the key of
// stored objects, and the input hash every report prints).
func HashFile(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", err
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}
