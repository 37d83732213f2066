package archive

import (
	"bytes"
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"
)

var fixedNow = func() time.Time { return time.Date(2026, 3, 14, 9, 30, 0, 0, time.UTC) }

func newArchive(t *testing.T) *Archive {
	t.Helper()
	a, err := Init(filepath.Join(t.TempDir(), "arch"))
	if err != nil {
		t.Fatal(err)
	}
	a.Now = fixedNow
	t.Cleanup(func() { a.Close() })
	return a
}

func writeFile(t *testing.T, dir, name string, data []byte) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, data, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestInitOpen(t *testing.T) {
	dir := t.TempDir()
	if _, err := Open(dir); !errors.Is(err, ErrNotArchive) {
		t.Errorf("Open of an empty folder: got %v, want ErrNotArchive", err)
	}
	a, err := Init(dir)
	if err != nil {
		t.Fatal(err)
	}
	var mode string
	var fk int
	if err := a.db.QueryRow(`PRAGMA journal_mode`).Scan(&mode); err != nil || mode != "wal" {
		t.Errorf("journal mode: got %q (%v), want wal", mode, err)
	}
	if err := a.db.QueryRow(`PRAGMA foreign_keys`).Scan(&fk); err != nil || fk != 1 {
		t.Errorf("foreign_keys: got %d (%v), want 1", fk, err)
	}
	// Foreign keys are enforced: an epoch of a missing structure fails.
	_, err = a.db.Exec(`INSERT INTO epochs(structure, date, datum, points_hash, created) VALUES (999, '2020-01-01', 'control', ?, 'x')`, strings.Repeat("a", 64))
	if err == nil {
		t.Error("epoch of a missing structure: got no error")
	}
	a.Close()
	if _, err := Init(dir); !errors.Is(err, ErrExists) {
		t.Errorf("second Init: got %v, want ErrExists", err)
	}
	// A database from a newer tool is refused.
	db, err := openDB(filepath.Join(dir, DBName))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := db.Exec(fmt.Sprintf("PRAGMA user_version = %d", SchemaVersion+1)); err != nil {
		t.Fatal(err)
	}
	db.Close()
	if _, err := Open(dir); !errors.Is(err, ErrNewerSchema) {
		t.Errorf("newer schema: got %v, want ErrNewerSchema", err)
	}
}

// columns returns table → column names of the database.
func columns(t *testing.T, db *sql.DB) map[string][]string {
	t.Helper()
	out := map[string][]string{}
	for _, table := range []string{"structures", "epochs", "results"} {
		rows, err := db.Query(`SELECT name FROM pragma_table_info(?) ORDER BY name`, table)
		if err != nil {
			t.Fatal(err)
		}
		for rows.Next() {
			var n string
			rows.Scan(&n)
			out[table] = append(out[table], n)
		}
		rows.Close()
	}
	return out
}

// TestMigrations migrates from an empty database and from every earlier
// version to the current one: the result has the same columns as a fresh
// archive, and rows written at the earlier version survive.
func TestMigrations(t *testing.T) {
	fresh := newArchive(t)
	want := columns(t, fresh.db)
	hash := strings.Repeat("ab", 32)
	for from := 0; from <= SchemaVersion; from++ {
		t.Run(fmt.Sprintf("from v%d", from), func(t *testing.T) {
			dir := t.TempDir()
			db, err := openDB(filepath.Join(dir, DBName))
			if err != nil {
				t.Fatal(err)
			}
			if err := migrate(context.Background(), db, from); err != nil {
				t.Fatal(err)
			}
			if from >= 1 {
				// Columns that exist since version 1.
				if _, err := db.Exec(`INSERT INTO structures(name, design_hash, created) VALUES ('Vale Street canopy', ?, 't')`, hash); err != nil {
					t.Fatal(err)
				}
				if _, err := db.Exec(`INSERT INTO epochs(structure, date, datum, points_hash, created) VALUES (1, '2019-06-01', 'bestfit', ?, 't')`, hash); err != nil {
					t.Fatal(err)
				}
			}
			db.Close()
			a, err := Open(dir)
			if err != nil {
				t.Fatal(err)
			}
			defer a.Close()
			var v int
			a.db.QueryRow(`PRAGMA user_version`).Scan(&v)
			if v != SchemaVersion {
				t.Errorf("user_version: got %d, want %d", v, SchemaVersion)
			}
			if got := columns(t, a.db); !reflect.DeepEqual(got, want) {
				t.Errorf("columns: got %v, want %v", got, want)
			}
			if from >= 1 {
				e, err := a.Epoch(1)
				if err != nil || e.Datum != DatumBestFit || e.PointsUnit != "m" {
					t.Errorf("epoch after migration: got %+v, %v", e, err)
				}
			}
		})
	}
}

func TestAddEpochValidation(t *testing.T) {
	a := newArchive(t)
	dir := t.TempDir()
	design := writeFile(t, dir, "design.yaml", []byte("corners: []\n"))
	if _, err := a.AddStructure("Harrow Lane market hall", design); err != nil {
		t.Fatal(err)
	}
	if _, err := a.AddStructure("Harrow Lane market hall", design); !errors.Is(err, ErrDuplicateStructure) {
		t.Errorf("second structure of the same name: got %v", err)
	}
	pts := writeFile(t, dir, "e1.csv", []byte("id,e,n,z\n1,0,0,0\n"))
	neg := -1.0
	tests := []struct {
		name string
		ne   NewEpoch
		want string
	}{
		{"bad date", NewEpoch{Date: "2024-13-01"}, "date"},
		{"bad datum", NewEpoch{Date: "2024-01-01", Datum: "free"}, "datum"},
		{"negative registration", NewEpoch{Date: "2024-01-01", RegistrationMM: -2}, "registration"},
		{"temperature", NewEpoch{Date: "2024-01-01", TemperatureC: &[]float64{200}[0]}, "temperature"},
		{"unknown structure", NewEpoch{Date: "2024-01-01", Structure: "nowhere"}, "no structure"},
		{"missing file", NewEpoch{Date: "2024-01-01", Structure: "Harrow Lane market hall", PointsPath: filepath.Join(dir, "none.csv")}, "no such file"},
	}
	_ = neg
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := a.AddEpoch(tc.ne)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("got %v, want an error containing %q", err, tc.want)
			}
		})
	}
	e1, err := a.AddEpoch(NewEpoch{Structure: "Harrow Lane market hall", Date: "2024-05-02", PointsPath: pts})
	if err != nil {
		t.Fatal(err)
	}
	// The same file again, even under another name, is detected.
	again := writeFile(t, dir, "copy.csv", []byte("id,e,n,z\n1,0,0,0\n"))
	_, err = a.AddEpoch(NewEpoch{Structure: "Harrow Lane market hall", Date: "2025-05-02", PointsPath: again})
	var dup *DuplicateError
	if !errors.As(err, &dup) || dup.Epoch != e1.ID || !strings.Contains(err.Error(), "Harrow Lane market hall") {
		t.Errorf("duplicate points: got %v, want a DuplicateError naming epoch %d", err, e1.ID)
	}
}

// TestPropertyRoundTrip adds random structures, epochs (some with a repeated
// points file) and results in seeded loops and checks that listing, a
// reopen, object extraction and result read-back return exactly what was
// added (a model-based property test).
func TestPropertyRoundTrip(t *testing.T) {
	for seed := uint64(1); seed <= 5; seed++ {
		t.Run(fmt.Sprint("seed ", seed), func(t *testing.T) {
			rng := rand.New(rand.NewPCG(seed, 99))
			dir := filepath.Join(t.TempDir(), "arch")
			a, err := Init(dir)
			if err != nil {
				t.Fatal(err)
			}
			a.Now = fixedNow
			src := t.TempDir()
			model := map[string][]Epoch{}
			var files [][]byte
			nStruct := 1 + rng.IntN(3)
			for s := 0; s < nStruct; s++ {
				name := fmt.Sprintf("Shell %c-%d", 'A'+s, rng.IntN(100))
				if _, err := a.AddStructure(name, writeFile(t, src, fmt.Sprintf("d%d.yaml", s), []byte(name))); err != nil {
					t.Fatal(err)
				}
				for k := 0; k < 1+rng.IntN(5); k++ {
					var data []byte
					if len(files) > 0 && rng.IntN(4) == 0 {
						data = files[rng.IntN(len(files))] // repeat
					} else {
						data = make([]byte, 1+rng.IntN(5000))
						for i := range data {
							data[i] = byte(rng.Uint32())
						}
					}
					ne := NewEpoch{Structure: name, Date: fmt.Sprintf("%04d-%02d-%02d", 2000+rng.IntN(30), 1+rng.IntN(12), 1+rng.IntN(28)),
						Instrument: `{"model":"generic total station","sigma_mm":1}`, Operator: "J. Doe", Notes: strings.Repeat("n", rng.IntN(20)),
						Datum: []string{DatumControl, DatumBestFit}[rng.IntN(2)], RegistrationMM: float64(rng.IntN(50)) / 10,
						PointsPath: writeFile(t, src, fmt.Sprintf("p%d-%d.bin", s, k), data), PointsFormat: "csv", PointsUnit: "m"}
					if rng.IntN(2) == 0 {
						v := float64(rng.IntN(400))/10 - 10
						ne.TemperatureC = &v
					}
					e, err := a.AddEpoch(ne)
					var dup *DuplicateError
					if errors.As(err, &dup) {
						if !containsBytes(files, data) {
							t.Fatalf("duplicate reported for a new file")
						}
						continue
					}
					if err != nil {
						t.Fatal(err)
					}
					if containsBytes(files, data) {
						t.Fatalf("repeated file not detected")
					}
					files = append(files, data)
					model[name] = append(model[name], e)
					res := Result{Epoch: e.ID, Summary: json.RawMessage(fmt.Sprintf(`{"verdict":"CONFORMS","n":%d}`, len(data))), Params: json.RawMessage(`{"k1":0.1,"cov":[[1e-8]]}`)}
					if err := a.PutResult(res); err != nil {
						t.Fatal(err)
					}
				}
			}
			a.Close()
			b, err := Open(dir)
			if err != nil {
				t.Fatal(err)
			}
			defer b.Close()
			sts, err := b.Structures()
			if err != nil || len(sts) != nStruct {
				t.Fatalf("structures: got %d (%v), want %d", len(sts), err, nStruct)
			}
			for _, st := range sts {
				got, err := b.Epochs(st.ID)
				if err != nil {
					t.Fatal(err)
				}
				want := sortedByDate(model[st.Name])
				if !reflect.DeepEqual(got, want) && !(len(got) == 0 && len(want) == 0) {
					t.Fatalf("epochs of %s:\n got %+v\nwant %+v", st.Name, got, want)
				}
				for _, e := range got {
					out := filepath.Join(t.TempDir(), "x")
					if err := b.Extract(e.PointsHash, out); err != nil {
						t.Fatal(err)
					}
					h, _ := HashFile(out)
					if h != e.PointsHash {
						t.Fatalf("extracted hash %s, want %s", h, e.PointsHash)
					}
					r, err := b.ResultOf(e.ID)
					if err != nil || !strings.Contains(string(r.Summary), "CONFORMS") || r.Computed != "2026-03-14T09:30:00Z" {
						t.Fatalf("result of %d: %+v %v", e.ID, r, err)
					}
				}
			}
			if p, err := b.Check(true); err != nil || len(p) != 0 {
				t.Fatalf("check: %v %v", p, err)
			}
		})
	}
}

func containsBytes(list [][]byte, b []byte) bool {
	for _, x := range list {
		if bytes.Equal(x, b) {
			return true
		}
	}
	return false
}

func sortedByDate(es []Epoch) []Epoch {
	out := append([]Epoch(nil), es...)
	for i := 1; i < len(out); i++ {
		for j := i; j > 0 && (out[j].Date < out[j-1].Date || out[j].Date == out[j-1].Date && out[j].ID < out[j-1].ID); j-- {
			out[j], out[j-1] = out[j-1], out[j]
		}
	}
	return out
}

func TestGCAndCheck(t *testing.T) {
	a := newArchive(t)
	src := t.TempDir()
	st, err := a.AddStructure("Orchard Row kiosk roof", writeFile(t, src, "d.yaml", []byte("design")))
	if err != nil {
		t.Fatal(err)
	}
	// An orphan object (as a killed add leaves) and a temporary file.
	orphan, err := a.putObject(writeFile(t, src, "o.csv", []byte("orphan")))
	if err != nil {
		t.Fatal(err)
	}
	tmp := filepath.Join(a.dir, "objects", tmpPrefix+"123")
	os.WriteFile(tmp, []byte("partial"), 0o644)
	// A young orphan survives a GC with grace.
	rep, err := a.GC(time.Hour)
	if err != nil || len(rep.Orphans) != 0 {
		t.Fatalf("GC with grace: %+v %v", rep, err)
	}
	rep, err = a.GC(0)
	if err != nil {
		t.Fatal(err)
	}
	if len(rep.Orphans) != 1 || rep.Orphans[0] != orphan || len(rep.Temps) != 1 {
		t.Errorf("GC: got %+v, want the orphan %s and one temp", rep, orphan)
	}
	if _, err := os.Stat(a.ObjectPath(st.DesignHash)); err != nil {
		t.Errorf("GC removed a referenced object: %v", err)
	}
	// Corrupt the design object: Check(deep) and Extract notice.
	os.WriteFile(a.ObjectPath(st.DesignHash), []byte("tampered"), 0o644)
	if p, _ := a.Check(true); len(p) != 1 || !strings.Contains(p[0], "corrupt") {
		t.Errorf("check of a tampered object: got %v", p)
	}
	if err := a.Extract(st.DesignHash, filepath.Join(src, "out")); !errors.Is(err, ErrCorrupt) {
		t.Errorf("extract of a tampered object: got %v, want ErrCorrupt", err)
	}
	os.Remove(a.ObjectPath(st.DesignHash))
	if p, _ := a.Check(false); len(p) != 1 || !strings.Contains(p[0], "missing") {
		t.Errorf("check of a missing object: got %v", p)
	}
}
