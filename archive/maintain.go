package archive

import (
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"
)

// GCReport lists what GC removed.
type GCReport struct {
	Orphans []string // hashes of objects no row names
	Temps   []string // leftover temporary files (base names)
	Bytes   int64    // bytes freed
}

// GC removes objects that no structure or epoch names and leftover
// temporary files, both only if last modified more than grace ago (an add
// running in another process may have written its object but not yet
// committed its row; a grace of an hour covers any such add). A grace of
// zero removes them all: use it only when no add can be running.
func (a *Archive) GC(grace time.Duration) (GCReport, error) {
	var rep GCReport
	used, err := a.referenced()
	if err != nil {
		return rep, err
	}
	cutoff := time.Now().Add(-grace)
	root := filepath.Join(a.dir, "objects")
	err = filepath.WalkDir(root, func(path string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		info, err := d.Info()
		if err != nil {
			return err
		}
		if grace > 0 && info.ModTime().After(cutoff) {
			return nil
		}
		name := d.Name()
		if strings.HasPrefix(name, tmpPrefix) {
			rep.Temps = append(rep.Temps, name)
		} else {
			hash := filepath.Base(filepath.Dir(path)) + name
			if used[hash] {
				return nil
			}
			rep.Orphans = append(rep.Orphans, hash)
		}
		rep.Bytes += info.Size()
		return os.Remove(path)
	})
	if err != nil {
		return rep, fmt.Errorf("archive: gc: %w", err)
	}
	return rep, nil
}

// referenced returns the set of object hashes named by any row.
func (a *Archive) referenced() (map[string]bool, error) {
	rows, err := a.db.Query(`SELECT design_hash FROM structures UNION SELECT points_hash FROM epochs`)
	if err != nil {
		return nil, fmt.Errorf("archive: %w", err)
	}
	defer rows.Close()
	used := map[string]bool{}
	for rows.Next() {
		var h string
		if err := rows.Scan(&h); err != nil {
			return nil, fmt.Errorf("archive: %w", err)
		}
		used[h] = true
	}
	return used, rows.Err()
}

// Check verifies the archive: SQLite's PRAGMA integrity_check and
// foreign_key_check, and that every object a row names exists (and, with
// deep, that its content still matches its hash). It returns the problems
// found, empty when the archive is sound; err is for failures to check.
func (a *Archive) Check(deep bool) ([]string, error) {
	var problems []string
	rows, err := a.db.Query(`PRAGMA integrity_check`)
	if err != nil {
		return nil, fmt.Errorf("archive: %w", err)
	}
	for rows.Next() {
		var s string
		if err := rows.Scan(&s); err != nil {
			rows.Close()
			return nil, fmt.Errorf("archive: %w", err)
		}
		if s != "ok" {
			problems = append(problems, "integrity: "+s)
		}
	}
	rows.Close()
	fk, err := a.db.Query(`PRAGMA foreign_key_check`)
	if err != nil {
		return nil, fmt.Errorf("archive: %w", err)
	}
	for fk.Next() {
		var table, parent string
		var rowid, idx any
		if err := fk.Scan(&table, &rowid, &parent, &idx); err != nil {
			fk.Close()
			return nil, fmt.Errorf("archive: %w", err)
		}
		problems = append(problems, fmt.Sprintf("foreign key: row %v of %s names a missing %s", rowid, table, parent))
	}
	fk.Close()
	used, err := a.referenced()
	if err != nil {
		return nil, err
	}
	for h := range used {
		if !validHash(h) {
			problems = append(problems, "bad hash "+h)
			continue
		}
		path := a.ObjectPath(h)
		if _, err := os.Stat(path); err != nil {
			problems = append(problems, "missing object "+h)
			continue
		}
		if deep {
			got, err := HashFile(path)
			if err != nil {
				return nil, fmt.Errorf("archive: %w", err)
			}
			if got != h {
				problems = append(problems, "corrupt object "+h)
			}
		}
	}
	sort.Strings(problems)
	return problems, nil
}
