package archive

import (
	"context"
	"database/sql"
	"fmt"
)

// migrations is the schema history: migrations[k] takes a database from
// user_version k to k+1. Steps are never edited once released; new ones are
// appended.
var migrations = []string{
	// 1: structures, epochs, results.
	`CREATE TABLE structures (
		id          INTEGER PRIMARY KEY,
		name        TEXT NOT NULL UNIQUE CHECK (name <> ''),
		design_hash TEXT NOT NULL CHECK (length(design_hash) = 64),
		created     TEXT NOT NULL
	);
	CREATE TABLE epochs (
		id              INTEGER PRIMARY KEY,
		structure       INTEGER NOT NULL REFERENCES structures(id),
		date            TEXT NOT NULL,
		instrument      TEXT NOT NULL DEFAULT '',
		operator        TEXT NOT NULL DEFAULT '',
		notes           TEXT NOT NULL DEFAULT '',
		datum           TEXT NOT NULL CHECK (datum IN ('control', 'bestfit')),
		registration_mm REAL NOT NULL DEFAULT 0 CHECK (registration_mm >= 0),
		temperature_c   REAL,
		points_hash     TEXT NOT NULL UNIQUE CHECK (length(points_hash) = 64),
		points_format   TEXT NOT NULL DEFAULT '',
		points_unit     TEXT NOT NULL DEFAULT 'm',
		created         TEXT NOT NULL
	);
	CREATE TABLE results (
		epoch    INTEGER PRIMARY KEY REFERENCES epochs(id) ON DELETE CASCADE,
		summary  TEXT NOT NULL CHECK (json_valid(summary)),
		params   TEXT NOT NULL CHECK (json_valid(params)),
		computed TEXT NOT NULL
	);`,
	// 2: keep the original file names (for extraction and reports) and
	// list epochs of a structure by date without a scan.
	`ALTER TABLE structures ADD COLUMN design_name TEXT NOT NULL DEFAULT '';
	ALTER TABLE epochs ADD COLUMN points_name TEXT NOT NULL DEFAULT '';
	CREATE INDEX epochs_by_structure_date ON epochs(structure, date);`,
}

// SchemaVersion is the user_version of a fully migrated database.
var SchemaVersion = len(migrations)

// migrate brings db from its user_version up to target, one transaction per
// step.
func migrate(ctx context.Context, db *sql.DB, target int) error {
	var v int
	if err := db.QueryRowContext(ctx, "PRAGMA user_version").Scan(&v); err != nil {
		return fmt.Errorf("archive: reading schema version: %w", err)
	}
	if v > len(migrations) {
		return fmt.Errorf("%w (version %d, this tool knows %d)", ErrNewerSchema, v, len(migrations))
	}
	for ; v < target; v++ {
		tx, err := db.BeginTx(ctx, nil)
		if err != nil {
			return err
		}
		if _, err := tx.ExecContext(ctx, migrations[v]); err != nil {
			tx.Rollback()
			return fmt.Errorf("archive: schema step %d: %w", v+1, err)
		}
		// PRAGMA takes no parameters; v+1 is an integer we control.
		if _, err := tx.ExecContext(ctx, fmt.Sprintf("PRAGMA user_version = %d", v+1)); err != nil {
			tx.Rollback()
			return fmt.Errorf("archive: schema step %d: %w", v+1, err)
		}
		if err := tx.Commit(); err != nil {
			return fmt.Errorf("archive: schema step %d: %w", v+1, err)
		}
	}
	return nil
}
