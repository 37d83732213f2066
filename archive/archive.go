package archive

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"time"

	_ "modernc.org/sqlite" // driver "sqlite"
)

// DBName is the database file inside an archive folder.
const DBName = "archive.db"

// Archive is an open archive folder. Its methods are safe for concurrent
// use by one process; several processes may read while one writes (WAL).
type Archive struct {
	dir string
	db  *sql.DB
	// Now is the clock for created/computed stamps; nil means time.Now.
	// Tests inject a fixed clock.
	Now func() time.Time
}

// Init creates an archive in dir (created if missing; it must not hold an
// archive yet) and returns it open.
func Init(dir string) (*Archive, error) {
	if _, err := os.Stat(filepath.Join(dir, DBName)); err == nil {
		return nil, fmt.Errorf("%w: %s", ErrExists, dir)
	}
	if err := os.MkdirAll(filepath.Join(dir, "objects"), 0o755); err != nil {
		return nil, fmt.Errorf("archive: %w", err)
	}
	return open(dir, true)
}

// Open opens the archive in dir and migrates its schema to SchemaVersion.
func Open(dir string) (*Archive, error) { return open(dir, false) }

func open(dir string, create bool) (*Archive, error) {
	path := filepath.Join(dir, DBName)
	if !create {
		if _, err := os.Stat(path); err != nil {
			return nil, fmt.Errorf("%w: %s", ErrNotArchive, dir)
		}
	}
	if err := os.MkdirAll(filepath.Join(dir, "objects"), 0o755); err != nil {
		return nil, fmt.Errorf("archive: %w", err)
	}
	db, err := openDB(path)
	if err != nil {
		return nil, err
	}
	if err := migrate(context.Background(), db, SchemaVersion); err != nil {
		db.Close()
		return nil, err
	}
	return &Archive{dir: dir, db: db}, nil
}

// openDB opens the SQLite file with foreign keys on, WAL journaling, a busy
// timeout and IMMEDIATE write transactions (so that a read-then-write
// transaction never fails to upgrade its lock).
func openDB(path string) (*sql.DB, error) {
	q := url.Values{}
	q.Add("_pragma", "foreign_keys(1)")
	q.Add("_pragma", "journal_mode(WAL)")
	q.Add("_pragma", "busy_timeout(10000)")
	q.Add("_pragma", "synchronous(FULL)")
	q.Set("_txlock", "immediate")
	db, err := sql.Open("sqlite", "file:"+filepath.ToSlash(path)+"?"+q.Encode())
	if err != nil {
		return nil, fmt.Errorf("archive: %w", err)
	}
	if err := db.Ping(); err != nil {
		db.Close()
		return nil, fmt.Errorf("archive: opening %s: %w", path, err)
	}
	return db, nil
}

// Close closes the database.
func (a *Archive) Close() error { return a.db.Close() }

// Dir returns the archive folder.
func (a *Archive) Dir() string { return a.dir }

func (a *Archive) now() string {
	t := time.Now()
	if a.Now != nil {
		t = a.Now()
	}
	return t.UTC().Format(time.RFC3339)
}

// tx runs f in one transaction, committed if f returns nil.
func (a *Archive) tx(f func(tx *sql.Tx) error) error {
	tx, err := a.db.Begin()
	if err != nil {
		return fmt.Errorf("archive: %w", err)
	}
	if err := f(tx); err != nil {
		tx.Rollback()
		return err
	}
	if err := tx.Commit(); err != nil {
		return fmt.Errorf("archive: %w", err)
	}
	return nil
}

// Structure is one surveyed structure and its design.
type Structure struct {
	ID         int64
	Name       string
	DesignHash string // SHA-256 of the design file as added
	DesignName string // base name of the design file as added
	Created    string // RFC 3339 UTC
}

// AddStructure records a structure under a new name with the design file at
// designPath (copied into the object store).
func (a *Archive) AddStructure(name, designPath string) (Structure, error) {
	name = strings.TrimSpace(name)
	if name == "" {
		return Structure{}, &FieldError{Field: "structure name", Value: name, Err: ErrInvalid, Hint: "give a name"}
	}
	hash, err := a.putObject(designPath)
	if err != nil {
		return Structure{}, err
	}
	s := Structure{Name: name, DesignHash: hash, DesignName: filepath.Base(designPath), Created: a.now()}
	err = a.tx(func(tx *sql.Tx) error {
		var id int64
		err := tx.QueryRow(`SELECT id FROM structures WHERE name = ?`, name).Scan(&id)
		if err == nil {
			return fmt.Errorf("%w: %q (id %d)", ErrDuplicateStructure, name, id)
		}
		if !errors.Is(err, sql.ErrNoRows) {
			return fmt.Errorf("archive: %w", err)
		}
		r, err := tx.Exec(`INSERT INTO structures(name, design_hash, design_name, created) VALUES (?, ?, ?, ?)`,
			s.Name, s.DesignHash, s.DesignName, s.Created)
		if err != nil {
			return fmt.Errorf("archive: %w", err)
		}
		s.ID, err = r.LastInsertId()
		return err
	})
	if err != nil {
		return Structure{}, err
	}
	return s, nil
}

const structureCols = `id, name, design_hash, design_name, created`

func scanStructure(row interface{ Scan(...any) error }) (Structure, error) {
	var s Structure
	err := row.Scan(&s.ID, &s.Name, &s.DesignHash, &s.DesignName, &s.Created)
	return s, err
}

// StructureByName returns the structure of that name.
func (a *Archive) StructureByName(name string) (Structure, error) {
	s, err := scanStructure(a.db.QueryRow(`SELECT `+structureCols+` FROM structures WHERE name = ?`, strings.TrimSpace(name)))
	if errors.Is(err, sql.ErrNoRows) {
		return Structure{}, fmt.Errorf("%w: no structure named %q", ErrNotFound, name)
	}
	return s, err
}

// Structures lists all structures by name.
func (a *Archive) Structures() ([]Structure, error) {
	rows, err := a.db.Query(`SELECT ` + structureCols + ` FROM structures ORDER BY name`)
	if err != nil {
		return nil, fmt.Errorf("archive: %w", err)
	}
	defer rows.Close()
	var out []Structure
	for rows.Next() {
		s, err := scanStructure(rows)
		if err != nil {
			return nil, fmt.Errorf("archive: %w", err)
		}
		out = append(out, s)
	}
	return out, rows.Err()
}

// Datum kinds as stored.
const (
	DatumControl = "control" // placed on stable control
	DatumBestFit = "bestfit" // registered by best fit to the shell
)

// Epoch is one survey of a structure.
type Epoch struct {
	ID        int64
	Structure int64
	Date      string // YYYY-MM-DD
	// Instrument describes the instrument model (free text or JSON).
	Instrument string
	Operator   string
	Notes      string
	Datum      string // DatumControl or DatumBestFit
	// RegistrationMM is the registration (or setup) standard error, mm.
	RegistrationMM float64
	// TemperatureC is the air or surface temperature in °C; nil if not
	// recorded.
	TemperatureC *float64
	PointsHash   string
	PointsName   string // base name of the points file as added
	PointsFormat string
	PointsUnit   string
	Created      string
}

// NewEpoch is the input of AddEpoch: an Epoch without ID, hash and stamp,
// plus the path of the points file.
type NewEpoch struct {
	Structure      string // structure name
	Date           string
	Instrument     string
	Operator       string
	Notes          string
	Datum          string // "" means DatumControl
	RegistrationMM float64
	TemperatureC   *float64
	PointsPath     string
	PointsFormat   string
	PointsUnit     string // "" means "m"
}

func (e *NewEpoch) validate() error {
	if _, err := time.Parse("2006-01-02", e.Date); err != nil {
		return &FieldError{Field: "date", Value: e.Date, Err: ErrInvalid, Hint: "use YYYY-MM-DD"}
	}
	if e.Datum == "" {
		e.Datum = DatumControl
	}
	if e.Datum != DatumControl && e.Datum != DatumBestFit {
		return &FieldError{Field: "datum", Value: e.Datum, Err: ErrInvalid, Hint: "use control or bestfit"}
	}
	if !(e.RegistrationMM >= 0) || math.IsInf(e.RegistrationMM, 0) {
		return &FieldError{Field: "registration error", Value: fmt.Sprint(e.RegistrationMM), Err: ErrInvalid, Hint: "a standard error in mm, zero or more"}
	}
	if t := e.TemperatureC; t != nil && (math.IsNaN(*t) || *t < -90 || *t > 90) {
		return &FieldError{Field: "temperature", Value: fmt.Sprint(*t), Err: ErrInvalid, Hint: "degrees Celsius"}
	}
	if e.PointsUnit == "" {
		e.PointsUnit = "m"
	}
	return nil
}

// AddEpoch archives a survey: it copies the points file into the object
// store (see the package comment for the crash-safe order) and then, in one
// transaction, checks that no epoch has the same points hash (a
// *DuplicateError naming that epoch) and inserts the row.
func (a *Archive) AddEpoch(ne NewEpoch) (Epoch, error) {
	if err := ne.validate(); err != nil {
		return Epoch{}, err
	}
	st, err := a.StructureByName(ne.Structure)
	if err != nil {
		return Epoch{}, err
	}
	hash, err := a.putObject(ne.PointsPath)
	if err != nil {
		return Epoch{}, err
	}
	e := Epoch{Structure: st.ID, Date: ne.Date, Instrument: ne.Instrument, Operator: ne.Operator, Notes: ne.Notes,
		Datum: ne.Datum, RegistrationMM: ne.RegistrationMM, TemperatureC: ne.TemperatureC, PointsHash: hash,
		PointsName: filepath.Base(ne.PointsPath), PointsFormat: ne.PointsFormat, PointsUnit: ne.PointsUnit, Created: a.now()}
	err = a.tx(func(tx *sql.Tx) error {
		var dup DuplicateError
		err := tx.QueryRow(`SELECT e.id, s.name, e.date FROM epochs e JOIN structures s ON s.id = e.structure WHERE e.points_hash = ?`, hash).
			Scan(&dup.Epoch, &dup.Structure, &dup.Date)
		if err == nil {
			dup.Hash = hash
			return &dup
		}
		if !errors.Is(err, sql.ErrNoRows) {
			return fmt.Errorf("archive: %w", err)
		}
		r, err := tx.Exec(`INSERT INTO epochs(structure, date, instrument, operator, notes, datum, registration_mm,
			temperature_c, points_hash, points_name, points_format, points_unit, created)
			VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
			e.Structure, e.Date, e.Instrument, e.Operator, e.Notes, e.Datum, e.RegistrationMM,
			nullFloat(e.TemperatureC), e.PointsHash, e.PointsName, e.PointsFormat, e.PointsUnit, e.Created)
		if err != nil {
			return fmt.Errorf("archive: %w", err)
		}
		e.ID, err = r.LastInsertId()
		return err
	})
	if err != nil {
		return Epoch{}, err
	}
	return e, nil
}

func nullFloat(p *float64) sql.NullFloat64 {
	if p == nil {
		return sql.NullFloat64{}
	}
	return sql.NullFloat64{Float64: *p, Valid: true}
}

const epochCols = `id, structure, date, instrument, operator, notes, datum, registration_mm, temperature_c,
	points_hash, points_name, points_format, points_unit, created`

func scanEpoch(row interface{ Scan(...any) error }) (Epoch, error) {
	var e Epoch
	var t sql.NullFloat64
	err := row.Scan(&e.ID, &e.Structure, &e.Date, &e.Instrument, &e.Operator, &e.Notes, &e.Datum, &e.RegistrationMM, &t,
		&e.PointsHash, &e.PointsName, &e.PointsFormat, &e.PointsUnit, &e.Created)
	if t.Valid {
		v := t.Float64
		e.TemperatureC = &v
	}
	return e, err
}

// Epoch returns the epoch with that id.
func (a *Archive) Epoch(id int64) (Epoch, error) {
	e, err := scanEpoch(a.db.QueryRow(`SELECT `+epochCols+` FROM epochs WHERE id = ?`, id))
	if errors.Is(err, sql.ErrNoRows) {
		return Epoch{}, fmt.Errorf("%w: no epoch %d", ErrNotFound, id)
	}
	return e, err
}

// Epochs lists the epochs of a structure by date, then id.
func (a *Archive) Epochs(structure int64) ([]Epoch, error) {
	rows, err := a.db.Query(`SELECT `+epochCols+` FROM epochs WHERE structure = ? ORDER BY date, id`, structure)
	if err != nil {
		return nil, fmt.Errorf("archive: %w", err)
	}
	defer rows.Close()
	var out []Epoch
	for rows.Next() {
		e, err := scanEpoch(rows)
		if err != nil {
			return nil, fmt.Errorf("archive: %w", err)
		}
		out = append(out, e)
	}
	return out, rows.Err()
}

// Result is the stored outcome of checking one epoch.
type Result struct {
	Epoch int64
	// Summary is the check's summary JSON.
	Summary json.RawMessage
	// Params is the fitted parameters with covariance, as JSON.
	Params   json.RawMessage
	Computed string
}

// PutResult stores (or replaces) the result of an epoch.
func (a *Archive) PutResult(r Result) error {
	if !json.Valid(r.Summary) {
		return &FieldError{Field: "summary", Value: truncate(string(r.Summary)), Err: ErrInvalid, Hint: "not JSON"}
	}
	if !json.Valid(r.Params) {
		return &FieldError{Field: "params", Value: truncate(string(r.Params)), Err: ErrInvalid, Hint: "not JSON"}
	}
	if r.Computed == "" {
		r.Computed = a.now()
	}
	return a.tx(func(tx *sql.Tx) error {
		_, err := tx.Exec(`INSERT INTO results(epoch, summary, params, computed) VALUES (?, ?, ?, ?)
			ON CONFLICT(epoch) DO UPDATE SET summary = excluded.summary, params = excluded.params, computed = excluded.computed`,
			r.Epoch, string(r.Summary), string(r.Params), r.Computed)
		if err != nil {
			return fmt.Errorf("archive: result of epoch %d: %w", r.Epoch, err)
		}
		return nil
	})
}

// ResultOf returns the stored result of an epoch.
func (a *Archive) ResultOf(epoch int64) (Result, error) {
	var r Result
	var s, p string
	err := a.db.QueryRow(`SELECT epoch, summary, params, computed FROM results WHERE epoch = ?`, epoch).Scan(&r.Epoch, &s, &p, &r.Computed)
	if errors.Is(err, sql.ErrNoRows) {
		return Result{}, fmt.Errorf("%w: no result for epoch %d", ErrNotFound, epoch)
	}
	if err != nil {
		return Result{}, fmt.Errorf("archive: %w", err)
	}
	r.Summary, r.Params = json.RawMessage(s), json.RawMessage(p)
	return r, nil
}

func truncate(s string) string {
	if len(s) > 40 {
		return s[:40] + "…"
	}
	return s
}
