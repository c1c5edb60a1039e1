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

var _ auth.TokenStore = (*Store)(nil)

const tokenColumns = `t.id, t.dataset_id, d.name, t.name, t.hash, t.prefix, t.created_by, t.created_at, t.revoked_at, t.last_used_at`

const tokenFrom = ` FROM api_tokens t JOIN datasets d ON d.id = t.dataset_id`

// optionalStamp stores an optional time: the zero time is NULL.
func optionalStamp(t time.Time) any {
	if t.IsZero() {
		return nil
	}
	return timeText(t)
}

// optionalTime reads a time stored by optionalStamp; NULL is the zero time.
func optionalTime(s sql.NullString) time.Time {
	if !s.Valid {
		return time.Time{}
	}
	return parseTime(s.String)
}

func scanToken(sc interface{ Scan(...any) error }) (auth.Token, error) {
	var tok auth.Token
	var created string
	var revoked, used sql.NullString
	if err := sc.Scan(&tok.ID, &tok.DatasetID, &tok.DatasetName, &tok.Name, &tok.Hash, &tok.Prefix,
		&tok.CreatedBy, &created, &revoked, &used); err != nil {
		return tok, err
	}
	tok.CreatedAt, tok.RevokedAt, tok.LastUsedAt = parseTime(created), optionalTime(revoked), optionalTime(used)
	return tok, nil
}

// InsertToken stores an API token (its hash, never its plaintext) and
// returns its id. A dataset that does not exist is a NotFound problem.
func (s *Store) InsertToken(ctx context.Context, tok auth.Token) (int64, error) {
	res, err := s.w.ExecContext(ctx, `INSERT INTO api_tokens
		(dataset_id, name, hash, prefix, created_by, created_at, revoked_at, last_used_at)
		VALUES (?, ?, ?, ?, ?, ?, ?, ?)`,
		tok.DatasetID, tok.Name, tok.Hash, tok.Prefix, tok.CreatedBy, timeText(tok.CreatedAt),
		optionalStamp(tok.RevokedAt), optionalStamp(tok.LastUsedAt))
	if err != nil {
		if strings.Contains(err.Error(), "FOREIGN KEY constraint failed") {
			return 0, problem.New(problem.NotFound, "there is no dataset %d", tok.DatasetID)
		}
		return 0, fmt.Errorf("insert token %q for dataset %d: %w", tok.Name, tok.DatasetID, err)
	}
	return res.LastInsertId()
}

// TokenByHash returns the token whose SHA-256 is hash, revoked or not.
func (s *Store) TokenByHash(ctx context.Context, hash []byte) (auth.Token, error) {
	tok, err := scanToken(s.r.QueryRowContext(ctx, `SELECT `+tokenColumns+tokenFrom+` WHERE t.hash = ?`, hash))
	if errors.Is(err, sql.ErrNoRows) {
		return tok, problem.New(problem.NotFound, "no such token")
	}
	if err != nil {
		return tok, fmt.Errorf("token by hash: %w", err)
	}
	return tok, nil
}

// Tokens lists every API token, revoked ones included, newest first.
func (s *Store) Tokens(ctx context.Context) ([]auth.Token, error) {
	rows, err := s.r.QueryContext(ctx, `SELECT `+tokenColumns+tokenFrom+` ORDER BY t.created_at DESC, t.id DESC`)
	if err != nil {
		return nil, fmt.Errorf("list tokens: %w", err)
	}
	defer rows.Close()
	var out []auth.Token
	for rows.Next() {
		tok, err := scanToken(rows)
		if err != nil {
			return nil, fmt.Errorf("list tokens: %w", err)
		}
		out = append(out, tok)
	}
	return out, rows.Err()
}

// RevokeToken marks a token revoked at the given time. Revoking it again
// keeps the first time, which is when it stopped working; an unknown id is
// a NotFound problem.
func (s *Store) RevokeToken(ctx context.Context, id int64, at time.Time) error {
	res, err := s.w.ExecContext(ctx, `UPDATE api_tokens SET revoked_at = coalesce(revoked_at, ?) WHERE id = ?`, timeText(at), id)
	if err != nil {
		return fmt.Errorf("revoke token %d: %w", id, err)
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return problem.New(problem.NotFound, "there is no token %d", id)
	}
	return nil
}

// TouchToken records that a token was used: one update by primary key.
func (s *Store) TouchToken(ctx context.Context, id int64, at time.Time) error {
	if _, err := s.w.ExecContext(ctx, `UPDATE api_tokens SET last_used_at = ? WHERE id = ?`, timeText(at), id); err != nil {
		return fmt.Errorf("touch token %d: %w", id, err)
	}
	return nil
}
