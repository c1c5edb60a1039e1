package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
)

// Backup writes a consistent copy of the database to the new file path
// while other Stores on the file (a running server, say) keep reading and
// writing; writes through this Store wait for the copy, which occupies its
// one writer connection. The copy is SQLite's VACUUM INTO
// (https://sqlite.org/lang_vacuum.html#vacuum_with_an_into_clause): one
// read transaction, so it holds the database as of one moment,
// including any version still loading at that moment (opening the copy
// with Open purges it, as after a crash). The copy is a self-contained file
// in rollback-journal mode; it needs no -wal or -shm file beside it.
//
// An existing file at path is refused, never overwritten. The copy is
// written to a temporary name in path's folder, synced, checked with
// PRAGMA integrity_check and only then given its name, so a failed or
// cancelled backup leaves no file at path.
func (s *Store) Backup(ctx context.Context, path string) error {
	abs, err := filepath.Abs(path)
	if err != nil {
		return fmt.Errorf("backup %s: %w", path, err)
	}
	if err := refuseExisting(path, abs); err != nil {
		return err
	}
	tmp, err := os.CreateTemp(filepath.Dir(abs), "."+filepath.Base(abs)+".*.tmp")
	if err != nil {
		return fmt.Errorf("backup %s: %w", path, err)
	}
	tmpName := tmp.Name()
	tmp.Close()
	named := false
	defer func() {
		if !named {
			os.Remove(tmpName)
		}
	}()

	// VACUUM INTO accepts an empty file as its output (CreateTemp reserved
	// the name). It runs on the writer connection because the read pool is
	// query_only, which SQLite applies to VACUUM INTO's output too; the
	// statement itself only reads this database, so in WAL mode other
	// connections' writes go on meanwhile. The path is absolute so that
	// SQLite never reads it as a "file:" URI.
	if _, err := s.w.ExecContext(ctx, `VACUUM INTO ?`, tmpName); err != nil {
		return fmt.Errorf("backup %s: copy %s: %w", path, s.path, err)
	}
	// SQLite does not sync the file VACUUM INTO writes (see the page
	// above); without this a power cut soon after could leave a backup
	// that looked complete but is not.
	if err := syncFile(tmpName); err != nil {
		return fmt.Errorf("backup %s: %w", path, err)
	}
	if err := checkCopy(ctx, tmpName); err != nil {
		return fmt.Errorf("backup %s: %w", path, err)
	}
	if err := claimName(tmpName, path, abs); err != nil {
		return err
	}
	named = true
	// The new directory entry is durable only once the folder is synced.
	if err := syncFile(filepath.Dir(abs)); err != nil {
		return fmt.Errorf("backup %s: %w", path, err)
	}
	return nil
}

func refuseExisting(path, abs string) error {
	_, err := os.Lstat(abs)
	switch {
	case err == nil:
		return fmt.Errorf("backup %s: the file exists already; a backup never overwrites a file, so choose a new name or move the old file away", path)
	case errors.Is(err, fs.ErrNotExist):
		return nil
	default:
		return fmt.Errorf("backup %s: %w", path, err)
	}
}

// claimName gives the finished copy tmp its final name abs. A hard link
// fails when the name has been taken since refuseExisting looked, where a
// rename would silently replace that file; file systems without hard
// links get a rename after one more look.
func claimName(tmp, path, abs string) error {
	err := os.Link(tmp, abs)
	if err == nil {
		os.Remove(tmp)
		return nil
	}
	if errors.Is(err, fs.ErrExist) {
		return refuseExisting(path, abs)
	}
	if err := refuseExisting(path, abs); err != nil {
		return err
	}
	if err := os.Rename(tmp, abs); err != nil {
		return fmt.Errorf("backup %s: %w", path, err)
	}
	return nil
}

func syncFile(name string) error {
	f, err := os.Open(name)
	if err != nil {
		return err
	}
	err = f.Sync()
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return fmt.Errorf("sync %s: %w", name, err)
	}
	return nil
}

// checkCopy runs PRAGMA integrity_check on the copy at name, opened read
// only so that checking changes nothing.
func checkCopy(ctx context.Context, name string) error {
	db, err := sql.Open("sqlite", "file:"+uriPath.Replace(name)+"?mode=ro")
	if err != nil {
		return fmt.Errorf("open the copy: %w", err)
	}
	defer db.Close()
	var verdict string
	if err := db.QueryRowContext(ctx, `PRAGMA integrity_check`).Scan(&verdict); err != nil {
		return fmt.Errorf("check the copy: %w", err)
	}
	if verdict != "ok" {
		// The verdict lists every fault, one a line; the first names the
		// kind of damage, and anyone who needs the rest runs the check.
		first, _, _ := strings.Cut(strings.TrimPrefix(verdict, "*** in database main ***\n"), "\n")
		return fmt.Errorf("the copy failed SQLite's integrity check (%s); the database or the disk holding the copy may be damaged: run \"PRAGMA integrity_check\" on both", first)
	}
	return nil
}
