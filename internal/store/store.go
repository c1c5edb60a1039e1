// Package store holds every SQL statement of ebb. It opens the SQLite file
// with one writer connection and a small pool of read-only connections
// (SQLite has one writer; funnelling writes through one connection means a
// long import, sign-ins and job updates queue in Go instead of failing with
// "database is locked"), applies the embedded migrations and converts
// between rows and domain types.
package store

import (
	"context"
	"database/sql"
	"fmt"
	"io/fs"
	"net/url"
	"slices"
	"strings"
	"time"

	_ "modernc.org/sqlite" // registers the "sqlite" driver

	"ebb/migrations"
)

// Store is the database. Its methods are safe for concurrent use.
type Store struct {
	path string
	lock *fileLock // held shared while open; see Open
	w    *sql.DB   // one connection: every write goes through it
	r    *readPool // read-only pool, statements prepared once
	now  func() time.Time
}

// Options configure Open.
type Options struct {
	// Readers is the size of the read-only pool (default 4).
	Readers int
	// Now returns the current time; default time.Now.
	Now func() time.Time
}

// Open opens (creating if needed) the database file at path, applies any
// pending migrations and purges versions left loading by a crash. A
// database written by a newer ebb is refused.
func Open(ctx context.Context, path string, opt Options) (*Store, error) {
	if opt.Readers <= 0 {
		opt.Readers = 4
	}
	if opt.Now == nil {
		opt.Now = time.Now
	}
	w, err := sql.Open("sqlite", dsn(path, false))
	if err != nil {
		return nil, fmt.Errorf("open %s: %w", path, err)
	}
	w.SetMaxOpenConns(1)
	w.SetMaxIdleConns(1)
	w.SetConnMaxLifetime(0)
	s := &Store{path: path, w: w, now: opt.Now}
	if err := w.PingContext(ctx); err != nil {
		w.Close()
		return nil, fmt.Errorf("open %s: %w", path, err)
	}
	if err := s.migrate(ctx, migrations.FS); err != nil {
		w.Close()
		return nil, err
	}
	r, err := sql.Open("sqlite", dsn(path, true))
	if err != nil {
		w.Close()
		return nil, fmt.Errorf("open %s for reading: %w", path, err)
	}
	r.SetMaxOpenConns(opt.Readers)
	r.SetMaxIdleConns(opt.Readers)
	s.r = &readPool{DB: r}
	// Versions left loading are purged only when no other process has the
	// database open: another ebb (a server while "ebb import" starts, say)
	// may be in the middle of an import. Every open Store holds a shared
	// lock on PATH.lock; the purge needs it exclusively for a moment.
	lock, alone, err := lockFile(path + ".lock")
	if err != nil {
		s.Close()
		return nil, fmt.Errorf("open %s: %w", path, err)
	}
	s.lock = lock
	if alone {
		if _, err := s.PurgeLoading(ctx); err != nil {
			s.Close()
			return nil, err
		}
	}
	if err := lock.share(); err != nil {
		s.Close()
		return nil, fmt.Errorf("open %s: %w", path, err)
	}
	return s, nil
}

// dsn builds the modernc.org/sqlite connection string: WAL so readers never
// block the writer, NORMAL sync (durable at each checkpoint, safe against
// corruption), a busy timeout as a last resort, foreign keys on, and
// immediate transactions so a writer takes its lock up front.
func dsn(path string, readOnly bool) string {
	q := url.Values{}
	q.Add("_pragma", "journal_mode(WAL)")
	q.Add("_pragma", "synchronous(NORMAL)")
	q.Add("_pragma", "busy_timeout(10000)")
	q.Add("_pragma", "foreign_keys(1)")
	if readOnly {
		q.Add("_pragma", "query_only(1)")
		// Readers map the file (up to 256 MiB) instead of copying each page
		// through a read call: an export joins every list row to its
		// customer, one random page at a time.
		q.Add("_pragma", "mmap_size(268435456)")
	} else {
		q.Set("_txlock", "immediate")
		// A larger page cache for the one writer keeps index pages of a
		// large import in memory (32 MiB; the default is 2 MiB).
		q.Add("_pragma", "cache_size(-32768)")
	}
	// The path is part of a URI: escape what SQLite would read as URI
	// syntax, so a folder named "shop#2" is not cut at the '#'.
	return "file:" + uriPath.Replace(path) + "?" + q.Encode()
}

var uriPath = strings.NewReplacer("%", "%25", "?", "%3f", "#", "%23")

// Close closes both pools.
func (s *Store) Close() error {
	var err error
	if s.r != nil {
		err = s.r.Close()
	}
	if e := s.w.Close(); e != nil && err == nil {
		err = e
	}
	if s.lock != nil {
		s.lock.release()
	}
	return err
}

// Path returns the database file's path.
func (s *Store) Path() string { return s.path }

// migrate applies the embedded migrations in name order, one transaction
// each, recording each name in schema_migrations.
func (s *Store) migrate(ctx context.Context, fsys fs.FS) error {
	if _, err := s.w.ExecContext(ctx, `CREATE TABLE IF NOT EXISTS schema_migrations (
		name TEXT PRIMARY KEY, applied_at TEXT NOT NULL)`); err != nil {
		return fmt.Errorf("migrate %s: %w", s.path, err)
	}
	names, err := fs.Glob(fsys, "*.sql")
	if err != nil {
		return fmt.Errorf("migrate: list migrations: %w", err)
	}
	slices.Sort(names)
	applied := map[string]bool{}
	rows, err := s.w.QueryContext(ctx, `SELECT name FROM schema_migrations ORDER BY name`)
	if err != nil {
		return fmt.Errorf("migrate %s: %w", s.path, err)
	}
	var unknown []string
	for rows.Next() {
		var n string
		if err := rows.Scan(&n); err != nil {
			rows.Close()
			return fmt.Errorf("migrate %s: %w", s.path, err)
		}
		applied[n] = true
		if !slices.Contains(names, n) {
			unknown = append(unknown, n)
		}
	}
	rows.Close()
	if len(unknown) > 0 {
		return fmt.Errorf("database %s was written by a newer ebb (it has migration %s, which this ebb does not know); run a newer ebb, or point --db at another file", s.path, strings.Join(unknown, ", "))
	}
	for _, name := range names {
		if applied[name] {
			continue
		}
		body, err := fs.ReadFile(fsys, name)
		if err != nil {
			return fmt.Errorf("migrate: read %s: %w", name, err)
		}
		if err := s.inTx(ctx, func(tx *sql.Tx) error {
			if _, err := tx.ExecContext(ctx, string(body)); err != nil {
				return err
			}
			_, err := tx.ExecContext(ctx, `INSERT INTO schema_migrations (name, applied_at) VALUES (?, ?)`, name, s.stamp())
			return err
		}); err != nil {
			return fmt.Errorf("migrate %s: apply %s: %w", s.path, name, err)
		}
	}
	return nil
}

// Migrations returns the names of the applied migrations, in order.
func (s *Store) Migrations(ctx context.Context) ([]string, error) {
	rows, err := s.r.QueryContext(ctx, `SELECT name FROM schema_migrations ORDER BY name`)
	if err != nil {
		return nil, fmt.Errorf("list migrations: %w", err)
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var n string
		if err := rows.Scan(&n); err != nil {
			return nil, err
		}
		out = append(out, n)
	}
	return out, rows.Err()
}

// inTx runs fn in one write transaction on the writer connection.
func (s *Store) inTx(ctx context.Context, fn func(*sql.Tx) error) error {
	tx, err := s.w.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	defer tx.Rollback()
	if err := fn(tx); err != nil {
		return err
	}
	return tx.Commit()
}

// stamp is the current time as stored: RFC 3339 in UTC.
func (s *Store) stamp() string { return s.now().UTC().Format(time.RFC3339) }

// Checkpoint folds the write-ahead log back into the database file; after a
// large import the log is as big as the data it wrote.
func (s *Store) Checkpoint(ctx context.Context) error {
	_, err := s.w.ExecContext(ctx, `PRAGMA wal_checkpoint(TRUNCATE)`)
	return err
}

// IntegrityCheck runs SQLite's integrity check and returns its verdict
// ("ok" when all is well).
func (s *Store) IntegrityCheck(ctx context.Context) (string, error) {
	var v string
	err := s.r.QueryRowContext(ctx, `PRAGMA integrity_check`).Scan(&v)
	return v, err
}
