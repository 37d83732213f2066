package cloud

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// table is everything a reader returned, concatenated over chunks.
type table struct {
	P      []r3.Vec
	ID     []string
	Code   []string
	Line   []int64
	Reject []string
	Attr   map[string][]float64
	names  []string // attribute names in order
}

// drain reads r to the end with chunks of max records, checking the Chunk
// invariants on the way, and returns the records and the final error (nil
// at a clean EOF).
func drain(t testing.TB, r Reader, max int) (table, error) {
	t.Helper()
	var c Chunk
	tb := table{Attr: map[string][]float64{}}
	for {
		err := r.Read(&c, max)
		if errors.Is(err, io.EOF) {
			if c.Len() != 0 {
				t.Fatalf("Read returned io.EOF with %d records", c.Len())
			}
			return tb, nil
		}
		if err != nil {
			return tb, err
		}
		n := c.Len()
		if n == 0 || (max > 0 && n > max) {
			t.Fatalf("Read returned %d records (max %d) without error", n, max)
		}
		if len(c.P) != n || len(c.Reject) != n || (c.ID != nil && len(c.ID) != n) || (c.Code != nil && len(c.Code) != n) {
			t.Fatalf("chunk slices differ in length: P %d Line %d Reject %d ID %d Code %d", len(c.P), n, len(c.Reject), len(c.ID), len(c.Code))
		}
		tb.P = append(tb.P, c.P...)
		tb.ID = append(tb.ID, c.ID...)
		tb.Code = append(tb.Code, c.Code...)
		tb.Line = append(tb.Line, c.Line...)
		tb.Reject = append(tb.Reject, c.Reject...)
		if tb.names == nil {
			for _, a := range c.Attr {
				tb.names = append(tb.names, a.Name)
			}
		}
		for _, a := range c.Attr {
			if len(a.Values) != n {
				t.Fatalf("attribute %s has %d values for %d records", a.Name, len(a.Values), n)
			}
			tb.Attr[a.Name] = append(tb.Attr[a.Name], a.Values...)
		}
	}
}

// openAll opens path with Open and drains it.
func openAll(t testing.TB, path string, opt Options) (table, Info, error) {
	t.Helper()
	r, err := Open(path, opt)
	if err != nil {
		return table{}, Info{}, err
	}
	defer r.Close()
	tb, err := drain(t, r, 0)
	return tb, r.Info(), err
}

// writeFile writes data to name in a fresh temporary directory.
func writeFile(t testing.TB, name string, data []byte) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// sharedRef returns the path of a file under ../shared/reference (relative
// to the repository root, the directory holding go.mod), skipping the test
// when it is absent.
func sharedRef(t testing.TB, rel string) string {
	t.Helper()
	dir, err := os.Getwd()
	if err != nil {
		t.Fatal(err)
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			break
		}
		up := filepath.Dir(dir)
		if up == dir {
			t.Skip("repository root (go.mod) not found")
		}
		dir = up
	}
	p := filepath.Join(dir, "..", "shared", "reference", rel)
	if _, err := os.Stat(p); err != nil {
		t.Skipf("reference file ../shared/reference/%s is absent; skipping", rel)
	}
	return p
}
