package store

import (
	"bytes"
	"context"
	"crypto/sha256"
	"database/sql"
	"errors"
	"fmt"
	"os"
	"slices"
	"strings"
	"testing"
	"time"

	"ebb/internal/auth"
	"ebb/internal/problem"
)

// mustInsertToken stores a token whose hash is the SHA-256 of plaintext.
func mustInsertToken(t *testing.T, st *Store, datasetID int64, name, plaintext string, created time.Time) auth.Token {
	t.Helper()
	h := sha256.Sum256([]byte(plaintext))
	tok := auth.Token{DatasetID: datasetID, Name: name, Hash: h[:], Prefix: plaintext[:auth.PrefixLen],
		CreatedBy: "ada", CreatedAt: created}
	id, err := st.InsertToken(context.Background(), tok)
	if err != nil {
		t.Fatalf("InsertToken(%q): %v", name, err)
	}
	tok.ID = id
	return tok
}

func mustTokenByHash(t *testing.T, st *Store, plaintext string) auth.Token {
	t.Helper()
	h := sha256.Sum256([]byte(plaintext))
	tok, err := st.TokenByHash(context.Background(), h[:])
	if err != nil {
		t.Fatalf("TokenByHash(sha256(%q)): %v", plaintext, err)
	}
	return tok
}

func TestTokenRoundTrip(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	shop := importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 10, "R1"}))
	created := time.Date(2026, 11, 30, 8, 15, 0, 0, time.FixedZone("CET", 3600))
	const plaintext = "ebb_mailtoolaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaa"
	in := mustInsertToken(t, st, shop.DatasetID, "Mail tool", plaintext, created)

	got := mustTokenByHash(t, st, plaintext)
	want := in
	want.DatasetName = "shop"
	want.CreatedAt = time.Date(2026, 11, 30, 7, 15, 0, 0, time.UTC)
	if !tokensEqual(got, want) {
		t.Fatalf("TokenByHash = %+v, want %+v", got, want)
	}

	used := time.Date(2026, 12, 1, 9, 0, 0, 0, time.UTC)
	if err := st.TouchToken(ctx, in.ID, used); err != nil {
		t.Fatal(err)
	}
	if got := mustTokenByHash(t, st, plaintext); !got.LastUsedAt.Equal(used) || got.Revoked() {
		t.Fatalf("after TouchToken: last used %v, revoked %v; want %v, not revoked", got.LastUsedAt, got.RevokedAt, used)
	}

	first := time.Date(2026, 12, 1, 10, 0, 0, 0, time.UTC)
	steps := []struct {
		name string
		at   time.Time
	}{
		{"first revoke", first},
		{"second revoke keeps the first time", first.Add(time.Hour)},
	}
	for _, step := range steps {
		if err := st.RevokeToken(ctx, in.ID, step.at); err != nil {
			t.Fatalf("%s: RevokeToken: %v", step.name, err)
		}
		got := mustTokenByHash(t, st, plaintext)
		if !got.RevokedAt.Equal(first) || !got.LastUsedAt.Equal(used) {
			t.Fatalf("%s: revoked %v, last used %v; want %v, %v", step.name, got.RevokedAt, got.LastUsedAt, first, used)
		}
	}
}

// tokensEqual compares tokens field by field (Hash is a slice, times are
// compared as instants).
func tokensEqual(a, b auth.Token) bool {
	return a.ID == b.ID && a.DatasetID == b.DatasetID && a.DatasetName == b.DatasetName && a.Name == b.Name &&
		bytes.Equal(a.Hash, b.Hash) && a.Prefix == b.Prefix && a.CreatedBy == b.CreatedBy &&
		a.CreatedAt.Equal(b.CreatedAt) && a.RevokedAt.Equal(b.RevokedAt) && a.LastUsedAt.Equal(b.LastUsedAt)
}

func TestTokenMissing(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	shop := importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 10, "R1"}))
	real := mustInsertToken(t, st, shop.DatasetID, "Mail tool", "ebb_realaaaa", fixedNow)
	other := sha256.Sum256([]byte("ebb_otheraaa"))

	tests := []struct {
		name string
		run  func() error
		want problem.Kind
	}{
		{"lookup of an unknown hash", func() error { _, err := st.TokenByHash(ctx, other[:]); return err }, problem.NotFound},
		{"lookup of an empty hash", func() error { _, err := st.TokenByHash(ctx, nil); return err }, problem.NotFound},
		{"lookup of a hash prefix", func() error { _, err := st.TokenByHash(ctx, real.Hash[:16]); return err }, problem.NotFound},
		{"revoke of an unknown id", func() error { return st.RevokeToken(ctx, real.ID+1, fixedNow) }, problem.NotFound},
		{"insert for a missing dataset", func() error {
			_, err := st.InsertToken(ctx, auth.Token{DatasetID: shop.DatasetID + 1, Name: "x", Hash: other[:], Prefix: "ebb_othe", CreatedAt: fixedNow})
			return err
		}, problem.NotFound},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := tt.run()
			if p := problem.As(err); p == nil || p.Kind != tt.want {
				t.Fatalf("err = %v, want a %s problem", err, tt.want)
			}
		})
	}
	if toks, err := st.Tokens(ctx); err != nil || len(toks) != 1 || toks[0].ID != real.ID {
		t.Fatalf("Tokens() = %+v, %v; want only token %d", toks, err, real.ID)
	}
}

// The schema refuses rows the auth code would never write, so a bug there
// cannot store a token that matches nothing or everything.
func TestInsertTokenRefusesBadRows(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	shop := importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 10, "R1"}))
	good := sha256.Sum256([]byte("ebb_goodaaaa"))
	mustInsertToken(t, st, shop.DatasetID, "Mail tool", "ebb_goodaaaa", fixedNow)

	tests := []struct {
		name string
		tok  auth.Token
	}{
		{"empty name", auth.Token{DatasetID: shop.DatasetID, Hash: bytes.Repeat([]byte{1}, 32), Prefix: "ebb_aaaa"}},
		{"hash of 16 bytes", auth.Token{DatasetID: shop.DatasetID, Name: "x", Hash: bytes.Repeat([]byte{1}, 16), Prefix: "ebb_aaaa"}},
		{"no hash", auth.Token{DatasetID: shop.DatasetID, Name: "x", Prefix: "ebb_aaaa"}},
		{"a hash taken already", auth.Token{DatasetID: shop.DatasetID, Name: "x", Hash: good[:], Prefix: "ebb_good"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			tt.tok.CreatedAt = fixedNow
			if id, err := st.InsertToken(ctx, tt.tok); err == nil {
				t.Fatalf("InsertToken(%+v) = %d, nil; want an error", tt.tok, id)
			}
		})
	}
	if toks, _ := st.Tokens(ctx); len(toks) != 1 {
		t.Fatalf("Tokens() has %d rows after refused inserts, want 1", len(toks))
	}
}

func TestTokensNewestFirst(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	shop := importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 10, "R1"}))
	cafe := importReady(t, st, "cafe", false, batch(t, 0, []string{"K1"}, order{0, "2024-02-05", 4.5, "K1"}))
	day1 := time.Date(2026, 11, 1, 9, 0, 0, 0, time.UTC)
	day2 := day1.Add(24 * time.Hour)
	// Inserted out of time order; two share a creation time and then go by
	// id, the later insert first.
	a := mustInsertToken(t, st, shop.DatasetID, "Mail tool", "ebb_aaaaaaaa", day2)
	b := mustInsertToken(t, st, cafe.DatasetID, "SMS tool", "ebb_bbbbbbbb", day1)
	c := mustInsertToken(t, st, shop.DatasetID, "Ads tool", "ebb_cccccccc", day2)
	if err := st.RevokeToken(ctx, a.ID, day2.Add(time.Hour)); err != nil {
		t.Fatal(err)
	}

	toks, err := st.Tokens(ctx)
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, tok := range toks {
		got = append(got, fmt.Sprintf("%d %s %s %s %s revoked=%v", tok.ID, tok.Name, tok.DatasetName, tok.Prefix,
			tok.CreatedAt.Format(time.RFC3339), tok.Revoked()))
	}
	want := []string{
		fmt.Sprintf("%d Ads tool shop ebb_cccc 2026-11-02T09:00:00Z revoked=false", c.ID),
		fmt.Sprintf("%d Mail tool shop ebb_aaaa 2026-11-02T09:00:00Z revoked=true", a.ID),
		fmt.Sprintf("%d SMS tool cafe ebb_bbbb 2026-11-01T09:00:00Z revoked=false", b.ID),
	}
	if !slices.Equal(got, want) {
		t.Fatalf("Tokens() =\n%s\nwant\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
}

func TestTokensGoWithTheirDataset(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	shop := importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 10, "R1"}))
	cafe := importReady(t, st, "cafe", false, batch(t, 0, []string{"K1"}, order{0, "2024-02-05", 4.5, "K1"}))
	mustInsertToken(t, st, shop.DatasetID, "Mail tool", "ebb_aaaaaaaa", fixedNow)
	keep := mustInsertToken(t, st, cafe.DatasetID, "SMS tool", "ebb_bbbbbbbb", fixedNow)

	err := st.inTx(ctx, func(tx *sql.Tx) error {
		if _, err := deleteVersions(ctx, tx, `dataset_id = ?`, shop.DatasetID); err != nil {
			return err
		}
		return deleteEmptyDatasets(ctx, tx)
	})
	if err != nil {
		t.Fatal(err)
	}
	toks, err := st.Tokens(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if len(toks) != 1 || toks[0].ID != keep.ID {
		t.Fatalf("Tokens() after deleting dataset shop = %+v, want only token %d of cafe", toks, keep.ID)
	}
	var n int
	if err := st.r.QueryRowContext(ctx, `SELECT count(*) FROM api_tokens`).Scan(&n); err != nil || n != 1 {
		t.Fatalf("api_tokens holds %d rows (%v), want 1", n, err)
	}
}

// A token made through auth is stored only as its hash: no column of its
// row, and no byte of the database file or its write-ahead log, holds the
// plaintext or its random part beyond the shown prefix.
func TestTokenPlaintextNeverStored(t *testing.T) {
	ctx := context.Background()
	st := mustOpenStore(t)
	shop := importReady(t, st, "shop", false, batch(t, 0, []string{"C1"}, order{0, "2024-01-05", 10, "R1"}))
	toks := &auth.Tokens{Store: st, Now: func() time.Time { return fixedNow }}
	plaintext, id, err := toks.Create(ctx, shop.DatasetID, "Mail tool", "ada")
	if err != nil {
		t.Fatal(err)
	}
	if _, err := toks.Verify(ctx, plaintext); err != nil {
		t.Fatalf("Verify of a new token: %v", err)
	}
	secret := plaintext[auth.PrefixLen:]
	hash := sha256.Sum256([]byte(plaintext))

	rows, err := st.r.QueryContext(ctx, `SELECT * FROM api_tokens WHERE id = ?`, id)
	if err != nil {
		t.Fatal(err)
	}
	cols, err := rows.Columns()
	if err != nil {
		t.Fatal(err)
	}
	if !rows.Next() {
		t.Fatalf("no api_tokens row with id %d", id)
	}
	vals := make([]any, len(cols))
	ptrs := make([]any, len(cols))
	for i := range vals {
		ptrs[i] = &vals[i]
	}
	if err := rows.Scan(ptrs...); err != nil {
		t.Fatal(err)
	}
	rows.Close()
	for i, v := range vals {
		var b []byte
		switch v := v.(type) {
		case []byte:
			b = v
		case string:
			b = []byte(v)
		default:
			b = fmt.Append(nil, v)
		}
		if bytes.Contains(b, []byte(secret)) || bytes.Contains(bytes.ToLower(b), []byte(secret)) {
			t.Errorf("column %s = %q holds the token's secret part", cols[i], b)
		}
		if cols[i] == "hash" && !bytes.Equal(b, hash[:]) {
			t.Errorf("column hash = %x, want SHA-256 of the token %x", b, hash)
		}
		if cols[i] == "prefix" && string(b) != plaintext[:auth.PrefixLen] {
			t.Errorf("column prefix = %q, want %q", b, plaintext[:auth.PrefixLen])
		}
	}

	// The hash must turn up in one of the files, or the scan reads the
	// wrong files and would pass whatever is stored.
	hashFound := false
	for _, path := range []string{st.Path(), st.Path() + "-wal"} {
		b, err := os.ReadFile(path)
		if errors.Is(err, os.ErrNotExist) {
			continue
		}
		if err != nil {
			t.Fatal(err)
		}
		if bytes.Contains(b, []byte(secret)) {
			t.Errorf("%s holds the token's secret part", path)
		}
		hashFound = hashFound || bytes.Contains(b, hash[:])
	}
	if !hashFound {
		t.Error("neither the database file nor its log holds the token's hash")
	}
}
