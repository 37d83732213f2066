package archive

import (
	"errors"
	"fmt"
	"sync"
	"testing"
)

// TestConcurrentAdds runs adds from several goroutines of one process and
// from a second handle on the same folder (as a second process would):
// distinct files all land, and of two adds of the same file exactly one
// succeeds and the other gets a DuplicateError.
func TestConcurrentAdds(t *testing.T) {
	a := newArchive(t)
	b, err := Open(a.dir)
	if err != nil {
		t.Fatal(err)
	}
	defer b.Close()
	src := t.TempDir()
	if _, err := a.AddStructure("Weir Lane footbridge canopy", writeFile(t, src, "d.yaml", []byte("d"))); err != nil {
		t.Fatal(err)
	}
	same := writeFile(t, src, "same.csv", []byte("the same survey\n"))
	var wg sync.WaitGroup
	errs := make([]error, 10)
	for i := range errs {
		wg.Add(1)
		go func() {
			defer wg.Done()
			h := a
			if i%2 == 1 {
				h = b
			}
			path := same
			if i >= 2 {
				path = writeFile(t, src, fmt.Sprintf("e%d.csv", i), []byte(fmt.Sprintf("survey %d\n", i)))
			}
			_, errs[i] = h.AddEpoch(NewEpoch{Structure: "Weir Lane footbridge canopy", Date: fmt.Sprintf("2030-01-%02d", i+1), PointsPath: path})
		}()
	}
	wg.Wait()
	var dup *DuplicateError
	ok0, ok1 := errs[0] == nil, errs[1] == nil
	if ok0 == ok1 || !(errors.As(errs[0], &dup) || errors.As(errs[1], &dup)) {
		t.Errorf("same file twice at once: errors %v and %v, want one success and one DuplicateError", errs[0], errs[1])
	}
	for i, err := range errs[2:] {
		if err != nil {
			t.Errorf("add %d: %v", i+2, err)
		}
	}
	st, _ := a.StructureByName("Weir Lane footbridge canopy")
	es, _ := b.Epochs(st.ID)
	if len(es) != 9 {
		t.Errorf("epochs: got %d, want 9", len(es))
	}
	if p, err := a.Check(true); err != nil || len(p) > 0 {
		t.Errorf("check: %v %v", p, err)
	}
}
