package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"strings"
	"time"

	"ebb/internal/auth"
	"ebb/internal/problem"
)

var (
	_ auth.Store        = (*Store)(nil)
	_ auth.SessionStore = (*Store)(nil)
)

func parseTime(s string) time.Time {
	t, _ := time.Parse(time.RFC3339, s)
	return t
}

func timeText(t time.Time) string { return t.UTC().Format(time.RFC3339) }

const userColumns = `id, name, role, disabled, created_at, password_set_at`

func scanUser(sc interface{ Scan(...any) error }, extra ...any) (auth.User, error) {
	var u auth.User
	var role, created, set string
	dest := append([]any{&u.ID, &u.Name, &role, &u.Disabled, &created, &set}, extra...)
	if err := sc.Scan(dest...); err != nil {
		return u, err
	}
	r, err := auth.ParseRole(role)
	if err != nil {
		return u, fmt.Errorf("user %d: %w", u.ID, err)
	}
	u.Role, u.CreatedAt, u.PasswordSetAt = r, parseTime(created), parseTime(set)
	return u, nil
}

// UserByName returns the user called name (any case) and their password hash.
func (s *Store) UserByName(ctx context.Context, name string) (auth.User, string, error) {
	var hash string
	u, err := scanUser(s.r.QueryRowContext(ctx, `SELECT `+userColumns+`, password_hash FROM users WHERE name = ?`, name), &hash)
	if errors.Is(err, sql.ErrNoRows) {
		return u, "", problem.New(problem.NotFound, "there is no user %q", name)
	}
	if err != nil {
		return u, "", fmt.Errorf("user %q: %w", name, err)
	}
	return u, hash, nil
}

// UserByID returns the user with the given id.
func (s *Store) UserByID(ctx context.Context, id int64) (auth.User, error) {
	u, err := scanUser(s.r.QueryRowContext(ctx, `SELECT `+userColumns+` FROM users WHERE id = ?`, id))
	if errors.Is(err, sql.ErrNoRows) {
		return u, problem.New(problem.NotFound, "there is no user %d", id)
	}
	if err != nil {
		return u, fmt.Errorf("user %d: %w", id, err)
	}
	return u, nil
}

// CountUsers returns the number of users, disabled ones included.
func (s *Store) CountUsers(ctx context.Context) (int, error) {
	var n int
	err := s.r.QueryRowContext(ctx, `SELECT count(*) FROM users`).Scan(&n)
	return n, err
}

// Users lists every user by name.
func (s *Store) Users(ctx context.Context) ([]auth.User, error) {
	rows, err := s.r.QueryContext(ctx, `SELECT `+userColumns+` FROM users ORDER BY name`)
	if err != nil {
		return nil, fmt.Errorf("list users: %w", err)
	}
	defer rows.Close()
	var out []auth.User
	for rows.Next() {
		u, err := scanUser(rows)
		if err != nil {
			return nil, fmt.Errorf("list users: %w", err)
		}
		out = append(out, u)
	}
	return out, rows.Err()
}

// InsertUser adds a user; a taken name (in any case) is a Conflict.
func (s *Store) InsertUser(ctx context.Context, u auth.User, hash string) (int64, error) {
	res, err := s.w.ExecContext(ctx, `INSERT INTO users (name, role, password_hash, disabled, created_at, password_set_at)
		VALUES (?, ?, ?, ?, ?, ?)`, u.Name, u.Role.String(), hash, u.Disabled, timeText(u.CreatedAt), timeText(u.PasswordSetAt))
	if err != nil {
		if strings.Contains(err.Error(), "UNIQUE constraint failed") {
			return 0, problem.New(problem.Conflict, "the user name %q is taken", u.Name)
		}
		return 0, fmt.Errorf("insert user %q: %w", u.Name, err)
	}
	return res.LastInsertId()
}

// SetPassword replaces a user's password hash. Sessions stay: a user who
// changes their own password remains signed in.
func (s *Store) SetPassword(ctx context.Context, id int64, hash string, at time.Time) error {
	res, err := s.w.ExecContext(ctx, `UPDATE users SET password_hash = ?, password_set_at = ? WHERE id = ?`, hash, timeText(at), id)
	if err != nil {
		return fmt.Errorf("set password of user %d: %w", id, err)
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return problem.New(problem.NotFound, "there is no user %d", id)
	}
	return nil
}

// SetDisabled disables or enables a user; disabling ends their sessions in
// the same transaction, so it takes effect at once.
func (s *Store) SetDisabled(ctx context.Context, id int64, disabled bool) error {
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx, `UPDATE users SET disabled = ? WHERE id = ?`, disabled, id)
		if err != nil {
			return err
		}
		if n, _ := res.RowsAffected(); n == 0 {
			return problem.New(problem.NotFound, "there is no user %d", id)
		}
		if disabled {
			_, err = tx.ExecContext(ctx, `DELETE FROM sessions WHERE user_id = ?`, id)
		}
		return err
	})
	if err != nil && problem.As(err) == nil {
		return fmt.Errorf("set user %d disabled=%v: %w", id, disabled, err)
	}
	return err
}

// InsertSession stores a new session.
func (s *Store) InsertSession(ctx context.Context, tokenHash string, row auth.SessionRow) error {
	_, err := s.w.ExecContext(ctx, `INSERT INTO sessions (token_hash, user_id, created_at, seen_at, expires_at, flash)
		VALUES (?, ?, ?, ?, ?, ?)`, tokenHash, row.UserID, timeText(row.CreatedAt), timeText(row.SeenAt), timeText(row.ExpiresAt), nullable(row.Flash))
	if err != nil {
		return fmt.Errorf("insert session of user %d: %w", row.UserID, err)
	}
	return nil
}

// SessionByHash returns a session of an enabled user.
func (s *Store) SessionByHash(ctx context.Context, tokenHash string) (auth.SessionRow, error) {
	var row auth.SessionRow
	var created, seen, expires string
	var flash sql.NullString
	err := s.r.QueryRowContext(ctx, `SELECT s.user_id, s.created_at, s.seen_at, s.expires_at, s.flash
		FROM sessions s JOIN users u ON u.id = s.user_id WHERE s.token_hash = ? AND u.disabled = 0`, tokenHash).
		Scan(&row.UserID, &created, &seen, &expires, &flash)
	if errors.Is(err, sql.ErrNoRows) {
		return row, problem.New(problem.NotFound, "no such session")
	}
	if err != nil {
		return row, fmt.Errorf("session: %w", err)
	}
	row.CreatedAt, row.SeenAt, row.ExpiresAt, row.Flash = parseTime(created), parseTime(seen), parseTime(expires), flash.String
	return row, nil
}

// TouchSession records that a session was used.
func (s *Store) TouchSession(ctx context.Context, tokenHash string, seen time.Time) error {
	_, err := s.w.ExecContext(ctx, `UPDATE sessions SET seen_at = ? WHERE token_hash = ?`, timeText(seen), tokenHash)
	return err
}

// SetSessionFlash stores the session's message for the next page.
func (s *Store) SetSessionFlash(ctx context.Context, tokenHash, flash string) error {
	_, err := s.w.ExecContext(ctx, `UPDATE sessions SET flash = ? WHERE token_hash = ?`, nullable(flash), tokenHash)
	return err
}

// DeleteSession ends a session.
func (s *Store) DeleteSession(ctx context.Context, tokenHash string) error {
	_, err := s.w.ExecContext(ctx, `DELETE FROM sessions WHERE token_hash = ?`, tokenHash)
	return err
}

// DeleteExpiredSessions removes sessions past their absolute expiry or idle
// since before idleBefore.
func (s *Store) DeleteExpiredSessions(ctx context.Context, now, idleBefore time.Time) (int, error) {
	res, err := s.w.ExecContext(ctx, `DELETE FROM sessions WHERE expires_at < ? OR seen_at < ?`, timeText(now), timeText(idleBefore))
	if err != nil {
		return 0, fmt.Errorf("delete expired sessions: %w", err)
	}
	n, _ := res.RowsAffected()
	return int(n), nil
}

// Setting returns an installation setting, or "" when unset.
func (s *Store) Setting(ctx context.Context, key string) (string, error) {
	var v string
	err := s.r.QueryRowContext(ctx, `SELECT value FROM settings WHERE key = ?`, key).Scan(&v)
	if errors.Is(err, sql.ErrNoRows) {
		return "", nil
	}
	if err != nil {
		return "", fmt.Errorf("setting %s: %w", key, err)
	}
	return v, nil
}

// SetSetting stores an installation setting; "" deletes it.
func (s *Store) SetSetting(ctx context.Context, key, value string) error {
	var err error
	if value == "" {
		_, err = s.w.ExecContext(ctx, `DELETE FROM settings WHERE key = ?`, key)
	} else {
		_, err = s.w.ExecContext(ctx, `INSERT INTO settings (key, value) VALUES (?, ?)
			ON CONFLICT (key) DO UPDATE SET value = excluded.value`, key, value)
	}
	if err != nil {
		return fmt.Errorf("set setting %s: %w", key, err)
	}
	return nil
}

// InitSetting stores value under key unless the key is set, and returns the
// stored value either way (first writer wins, in one statement).
func (s *Store) InitSetting(ctx context.Context, key, value string) (string, error) {
	if _, err := s.w.ExecContext(ctx, `INSERT INTO settings (key, value) VALUES (?, ?) ON CONFLICT (key) DO NOTHING`, key, value); err != nil {
		return "", fmt.Errorf("init setting %s: %w", key, err)
	}
	var v string
	if err := s.w.QueryRowContext(ctx, `SELECT value FROM settings WHERE key = ?`, key).Scan(&v); err != nil {
		return "", fmt.Errorf("init setting %s: %w", key, err)
	}
	return v, nil
}

func nullable(s string) any {
	if s == "" {
		return nil
	}
	return s
}
