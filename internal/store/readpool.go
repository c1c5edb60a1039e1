package store

import (
	"context"
	"database/sql"
	"sync"
)

// readPool is the read-only connection pool with its statements prepared
// once: the SQLite driver compiles every query it is given, and on a page
// that reads a handful of rows that compiling costs as much as the reading.
// Queries are the store's own constant strings (never built from input), so
// the cache holds a fixed, small set.
type readPool struct {
	*sql.DB
	stmts sync.Map // query → *sql.Stmt
}

func (p *readPool) stmt(ctx context.Context, query string) (*sql.Stmt, error) {
	if s, ok := p.stmts.Load(query); ok {
		return s.(*sql.Stmt), nil
	}
	s, err := p.DB.PrepareContext(ctx, query)
	if err != nil {
		return nil, err
	}
	if prev, loaded := p.stmts.LoadOrStore(query, s); loaded {
		s.Close()
		return prev.(*sql.Stmt), nil
	}
	return s, nil
}

// QueryContext runs a query through its prepared statement.
func (p *readPool) QueryContext(ctx context.Context, query string, args ...any) (*sql.Rows, error) {
	s, err := p.stmt(ctx, query)
	if err != nil {
		return nil, err
	}
	return s.QueryContext(ctx, args...)
}

// QueryRowContext runs a one-row query through its prepared statement; a
// failure to prepare shows as the row's error.
func (p *readPool) QueryRowContext(ctx context.Context, query string, args ...any) *sql.Row {
	s, err := p.stmt(ctx, query)
	if err != nil {
		// database/sql has no way to build a Row carrying an error; let the
		// pool report it the usual way.
		return p.DB.QueryRowContext(ctx, query, args...)
	}
	return s.QueryRowContext(ctx, args...)
}

// Close closes the statements and the pool.
func (p *readPool) Close() error {
	p.stmts.Range(func(_, s any) bool {
		s.(*sql.Stmt).Close()
		return true
	})
	return p.DB.Close()
}
