package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"

	"ebb/internal/problem"
)

// Upload is a file (and optional customers file) uploaded for import.
type Upload struct {
	ID            int64
	Token         string
	UserID        int64
	Dir           string
	OrdersName    string
	OrdersSize    int64
	CustomersName string // "" when none
	CustomersSize int64
	CreatedAt     time.Time
}

// InsertUpload records an upload whose files are in u.Dir.
func (s *Store) InsertUpload(ctx context.Context, u Upload) (int64, error) {
	res, err := s.w.ExecContext(ctx, `INSERT INTO uploads (token, user_id, dir, orders_name, orders_size, customers_name, customers_size, created_at)
		VALUES (?, ?, ?, ?, ?, ?, ?, ?)`, u.Token, u.UserID, u.Dir, u.OrdersName, u.OrdersSize,
		nullable(u.CustomersName), u.CustomersSize, timeText(u.CreatedAt))
	if err != nil {
		return 0, fmt.Errorf("insert upload %s: %w", u.OrdersName, err)
	}
	return res.LastInsertId()
}

// UploadByToken returns the upload with the given token.
func (s *Store) UploadByToken(ctx context.Context, token string) (Upload, error) {
	var u Upload
	var cname sql.NullString
	var csize sql.NullInt64
	var created string
	err := s.r.QueryRowContext(ctx, `SELECT id, token, user_id, dir, orders_name, orders_size, customers_name, customers_size, created_at
		FROM uploads WHERE token = ?`, token).Scan(&u.ID, &u.Token, &u.UserID, &u.Dir, &u.OrdersName, &u.OrdersSize, &cname, &csize, &created)
	if errors.Is(err, sql.ErrNoRows) {
		return u, problem.New(problem.NotFound, "there is no such upload; it may have been imported or cleaned up already")
	}
	if err != nil {
		return u, fmt.Errorf("upload %s: %w", token, err)
	}
	u.CustomersName, u.CustomersSize, u.CreatedAt = cname.String, csize.Int64, parseTime(created)
	return u, nil
}

// DeleteUploadsBefore forgets uploads created before t and returns their
// folders, for the caller to remove.
func (s *Store) DeleteUploadsBefore(ctx context.Context, t time.Time) ([]string, error) {
	var dirs []string
	err := s.inTx(ctx, func(tx *sql.Tx) error {
		rows, err := tx.QueryContext(ctx, `SELECT dir FROM uploads WHERE created_at < ?`, timeText(t))
		if err != nil {
			return err
		}
		for rows.Next() {
			var d string
			if err := rows.Scan(&d); err != nil {
				rows.Close()
				return err
			}
			dirs = append(dirs, d)
		}
		rows.Close()
		_, err = tx.ExecContext(ctx, `DELETE FROM uploads WHERE created_at < ?`, timeText(t))
		return err
	})
	if err != nil {
		return nil, fmt.Errorf("delete old uploads: %w", err)
	}
	return dirs, nil
}
