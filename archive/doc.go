// Package archive keeps the survey history of structures: one folder per
// archive holding an SQLite database (archive.db, driver "sqlite" from
// modernc.org/sqlite, pure Go) and the original input files, stored
// content-addressed by their SHA-256 under objects/ab/cdef… (the first two
// hex digits name the sub-folder, the other 62 the file).
//
// The database records structures (a name and the hash of its design file),
// epochs (a survey of one structure on one date: instrument, operator,
// datum kind, registration error, temperature, and the hash, format and unit
// of its points file) and results (the JSON summary and fitted parameters
// with covariance of a check of an epoch). Its schema is a versioned list of
// SQL steps (migrations.go) applied at open, one transaction per step, with
// the version kept in PRAGMA user_version. The database runs in WAL mode
// with foreign keys on; every write is one transaction.
//
// Crash safety: an input file is copied to a temporary name inside the
// archive folder, hashed on the way, fsynced and renamed into objects/
// before the row that names it is committed. A crash or kill at any point
// leaves the archive as it was, possibly with an orphan object or temporary
// file and no row naming it; GC removes those.
//
// Units: registration errors in millimetres (column registration_mm) and
// temperatures in degrees Celsius (temperature_c), as entered by the
// surveyor; dates are civil dates YYYY-MM-DD; created/computed stamps are
// RFC 3339 UTC. The package does no geometry and interprets no point file.
package archive
