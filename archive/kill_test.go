package archive

import (
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

const killEnv = "SADDLECHECK_ARCHIVE_KILL_CHILD"

// TestKillDuringAddChild is the child half of TestKillDuringAdd: it adds
// the epoch named in the environment and is killed while doing so.
func TestKillDuringAddChild(t *testing.T) {
	spec := os.Getenv(killEnv)
	if spec == "" {
		t.Skip("child process of TestKillDuringAdd only")
	}
	dir, points, _ := strings.Cut(spec, "|")
	a, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	fmt.Println("ready")
	if _, err := a.AddEpoch(NewEpoch{Structure: "Kestrel Yard shelter", Date: "2031-09-09", PointsPath: points}); err != nil {
		t.Fatal(err)
	}
	a.Close()
}

// TestKillDuringAdd re-executes the test binary as a child that adds a large
// points file and kills it with SIGKILL after a range of delays (before,
// during and after the copy); each time the archive must open, pass
// PRAGMA integrity_check and foreign_key_check, and have no epoch row
// without its object. GC then removes what the killed adds left behind.
func TestKillDuringAdd(t *testing.T) {
	if testing.Short() {
		t.Skip("spawns child processes")
	}
	dir := filepath.Join(t.TempDir(), "arch")
	a, err := Init(dir)
	if err != nil {
		t.Fatal(err)
	}
	src := t.TempDir()
	if _, err := a.AddStructure("Kestrel Yard shelter", writeFile(t, src, "d.yaml", []byte("design"))); err != nil {
		t.Fatal(err)
	}
	a.Close()
	big := make([]byte, 24<<20)
	for i := range big {
		big[i] = byte(i * 7)
	}
	delays := []time.Duration{0, 5 * time.Millisecond, 15 * time.Millisecond, 40 * time.Millisecond, 80 * time.Millisecond, 160 * time.Millisecond, 400 * time.Millisecond}
	for k, d := range delays {
		copy(big, fmt.Sprintf("variant %d", k)) // distinct content each time
		points := writeFile(t, src, fmt.Sprintf("scan%d.ply", k), big)
		cmd := exec.Command(os.Args[0], "-test.run=^TestKillDuringAddChild$", "-test.count=1")
		cmd.Env = append(os.Environ(), killEnv+"="+dir+"|"+points)
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		time.Sleep(d)
		cmd.Process.Kill() // SIGKILL on Unix
		cmd.Wait()

		b, err := Open(dir)
		if err != nil {
			t.Fatalf("after kill at %v: open: %v", d, err)
		}
		problems, err := b.Check(true)
		if err != nil || len(problems) != 0 {
			t.Fatalf("after kill at %v: %v %v", d, problems, err)
		}
		st, _ := b.StructureByName("Kestrel Yard shelter")
		es, _ := b.Epochs(st.ID)
		for _, e := range es {
			if _, err := os.Stat(b.ObjectPath(e.PointsHash)); err != nil {
				t.Fatalf("after kill at %v: epoch %d without its object", d, e.ID)
			}
		}
		temps, objs := 0, 0
		filepath.Walk(filepath.Join(dir, "objects"), func(p string, info os.FileInfo, err error) error {
			if err == nil && !info.IsDir() {
				if strings.HasPrefix(info.Name(), tmpPrefix) {
					temps++
				} else {
					objs++
				}
			}
			return nil
		})
		t.Logf("kill after %v: %d epochs, %d objects, %d temporary files", d, len(es), objs, temps)
		b.Close()
	}
	b, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	defer b.Close()
	if _, err := b.GC(0); err != nil {
		t.Fatal(err)
	}
	filepath.Walk(filepath.Join(dir, "objects"), func(p string, info os.FileInfo, err error) error {
		if err == nil && strings.HasPrefix(info.Name(), tmpPrefix) {
			t.Errorf("temporary file left after GC: %s", p)
		}
		return nil
	})
	// The archive is still usable: a complete add succeeds.
	if _, err := b.AddEpoch(NewEpoch{Structure: "Kestrel Yard shelter", Date: "2032-01-01", PointsPath: writeFile(t, src, "final.csv", []byte("1,0,0,0\n"))}); err != nil {
		t.Fatal(err)
	}
}
