package main

import (
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"

	"ebb/internal/store"
)

func backupCommand() command {
	return command{
		name:    "backup",
		summary: "copy the database to a new file, safely while ebb runs",
		detail: `
Writes a consistent copy of --db to --out with SQLite's VACUUM INTO: the copy
holds the database as of one moment, even while a server or an import keeps
writing. --out must not exist; the copy is written under a temporary name
beside it, checked with PRAGMA integrity_check and only then renamed, so a
failed backup leaves no file behind. The copy is one self-contained file.

To restore: stop ebb, move the database file and any FILE-wal and FILE-shm
beside it away, copy the backup to the database's name and start ebb. An
import that was running when the backup was taken is not in it.`,
		setup: func(f *flags) func(context.Context, env, []string) error {
			var db, out string
			f.String(&db, "db", "ebb.db", "FILE", "SQLite database file to copy")
			f.String(&out, "out", "", "FILE", "new file to write the copy to")
			return func(ctx context.Context, e env, args []string) error {
				if len(args) > 0 {
					return fmt.Errorf("backup: unexpected argument %q", args[0])
				}
				if out == "" {
					return errors.New("backup: --out FILE is required")
				}
				// store.Open creates a missing file; a backup of a
				// mistyped name must fail instead of copying a new,
				// empty database.
				if st, err := os.Stat(db); errors.Is(err, fs.ErrNotExist) {
					return fmt.Errorf("backup: there is no database %s (check --db)", db)
				} else if err != nil {
					return fmt.Errorf("backup: %w", err)
				} else if st.IsDir() {
					return fmt.Errorf("backup: --db %s is a folder, not a database file", db)
				}
				st, err := store.Open(ctx, db, store.Options{})
				if err != nil {
					return fmt.Errorf("backup: %w", err)
				}
				defer st.Close()
				if err := st.Backup(ctx, out); err != nil {
					return err
				}
				fmt.Fprintf(e.stdout, "backed up %s to %s\n", db, out)
				return nil
			}
		},
	}
}
