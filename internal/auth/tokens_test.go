package auth_test

import (
	"context"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	"ebb/internal/auth"
	"ebb/internal/problem"
	"ebb/internal/store"
)

// These tests run against the real store, so "refused at once" and "only
// the hash is kept" are checked on SQLite, not on a map.

var tokenStart = time.Date(2026, 12, 1, 12, 0, 0, 0, time.UTC)

// clock is a settable test clock.
type clock struct{ now time.Time }

func (c *clock) Now() time.Time { return c.now }

// mustOpenStore returns a migrated store in a fresh temporary directory.
func mustOpenStore(t *testing.T) *store.Store {
	t.Helper()
	st, err := store.Open(context.Background(), filepath.Join(t.TempDir(), "ebb.db"),
		store.Options{Now: func() time.Time { return tokenStart }})
	if err != nil {
		t.Fatalf("store.Open: %v", err)
	}
	t.Cleanup(func() { st.Close() })
	return st
}

// mustDataset creates a ready, empty dataset called name and returns its id.
func mustDataset(t *testing.T, st *store.Store, name string) int64 {
	t.Helper()
	ctx := context.Background()
	imp, err := st.BeginImport(ctx, name, "UTC", false, name+".csv")
	if err != nil {
		t.Fatalf("BeginImport(%q): %v", name, err)
	}
	if err := st.FinishImport(ctx, imp, store.ImportStats{}); err != nil {
		t.Fatalf("FinishImport(%q): %v", name, err)
	}
	return imp.DatasetID
}

func newTokens(t *testing.T) (*auth.Tokens, *store.Store, *clock) {
	t.Helper()
	st := mustOpenStore(t)
	c := &clock{now: tokenStart}
	return &auth.Tokens{Store: st, Now: c.Now}, st, c
}

func mustCreate(t *testing.T, toks *auth.Tokens, datasetID int64, name string) (string, int64) {
	t.Helper()
	plaintext, id, err := toks.Create(context.Background(), datasetID, name, "ada")
	if err != nil {
		t.Fatalf("Create(%d, %q): %v", datasetID, name, err)
	}
	return plaintext, id
}

// wantProblem fails unless err is a problem of kind with exactly msg.
func wantProblem(t *testing.T, what string, err error, kind problem.Kind, msg string) {
	t.Helper()
	p := problem.As(err)
	if p == nil || p.Kind != kind || (msg != "" && p.Message != msg) {
		t.Fatalf("%s: err = %v, want a %s problem %q", what, err, kind, msg)
	}
}

var tokenShape = regexp.MustCompile(`^ebb_[a-z2-7]{52}$`)

func TestTokenCreateAndVerify(t *testing.T) {
	ctx := context.Background()
	toks, st, c := newTokens(t)
	shop, cafe := mustDataset(t, st, "shop"), mustDataset(t, st, "cafe")

	tests := []struct {
		name      string
		datasetID int64
		dataset   string
		tokName   string
		wantName  string
	}{
		{"shop's mail tool", shop, "shop", "Mail tool", "Mail tool"},
		{"cafe's SMS tool, name trimmed", cafe, "cafe", "  SMS tool\t", "SMS tool"},
		{"a second token for shop", shop, "shop", "Newsletter – Ünïcode", "Newsletter – Ünïcode"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c.now = c.now.Add(time.Hour)
			created := c.now
			plaintext, id := mustCreate(t, toks, tt.datasetID, tt.tokName)
			if !tokenShape.MatchString(plaintext) {
				t.Fatalf("Create = %q, want ebb_ and 52 lower-case base32 characters", plaintext)
			}
			c.now = c.now.Add(5 * time.Minute)
			tok, err := toks.Verify(ctx, plaintext)
			if err != nil {
				t.Fatalf("Verify(new token): %v", err)
			}
			if tok.ID != id || tok.DatasetID != tt.datasetID || tok.DatasetName != tt.dataset || tok.Name != tt.wantName ||
				tok.Prefix != plaintext[:auth.PrefixLen] || tok.CreatedBy != "ada" || !tok.CreatedAt.Equal(created) ||
				tok.Revoked() || !tok.LastUsedAt.Equal(c.now) {
				t.Fatalf("Verify = %+v, want id %d, dataset %d (%s), name %q, prefix %q, by ada, created %v, used %v",
					tok, id, tt.datasetID, tt.dataset, tt.wantName, plaintext[:auth.PrefixLen], created, c.now)
			}
		})
	}
	all, err := st.Tokens(ctx)
	if err != nil || len(all) != len(tests) {
		t.Fatalf("Tokens() = %d tokens, %v; want %d", len(all), err, len(tests))
	}
}

func TestTokenCreateRefuses(t *testing.T) {
	toks, st, _ := newTokens(t)
	shop := mustDataset(t, st, "shop")

	tests := []struct {
		name      string
		datasetID int64
		tokName   string
		want      problem.Kind
	}{
		{"empty name", shop, "", problem.Invalid},
		{"blank name", shop, "   ", problem.Invalid},
		{"81 characters", shop, strings.Repeat("x", 81), problem.Invalid},
		{"81 characters of two bytes", shop, strings.Repeat("é", 81), problem.Invalid},
		{"a line break", shop, "Mail\ntool", problem.Invalid},
		{"a tab inside", shop, "Mail\ttool", problem.Invalid},
		{"not UTF-8", shop, "Mail \xff tool", problem.Invalid},
		{"missing dataset", shop + 100, "Mail tool", problem.NotFound},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			plaintext, id, err := toks.Create(context.Background(), tt.datasetID, tt.tokName, "ada")
			wantProblem(t, "Create", err, tt.want, "")
			if plaintext != "" || id != 0 {
				t.Errorf("refused Create returned %q, %d; want nothing", plaintext, id)
			}
			// The message is a sentence for people, not a database error.
			if msg := problem.As(err).Message; strings.Contains(strings.ToLower(msg), "constraint") || strings.Contains(msg, "sqlite") {
				t.Errorf("message %q leaks an internal error", msg)
			}
		})
	}
	if all, _ := st.Tokens(context.Background()); len(all) != 0 {
		t.Fatalf("refused creations stored %d tokens", len(all))
	}

	ok := []struct {
		name    string
		tokName string
	}{
		{"one character", "x"},
		{"80 characters", strings.Repeat("x", 80)},
		{"80 characters of two bytes", strings.Repeat("é", 80)},
	}
	for _, tt := range ok {
		t.Run(tt.name, func(t *testing.T) {
			mustCreate(t, toks, shop, tt.tokName)
		})
	}
}

func TestTokenRevokedIsRefusedAtOnce(t *testing.T) {
	ctx := context.Background()
	toks, st, c := newTokens(t)
	shop := mustDataset(t, st, "shop")
	revoked, id := mustCreate(t, toks, shop, "Mail tool")
	kept, _ := mustCreate(t, toks, shop, "SMS tool")

	if _, err := toks.Verify(ctx, revoked); err != nil {
		t.Fatalf("Verify before revoking: %v", err)
	}
	c.now = c.now.Add(time.Second)
	if err := toks.Revoke(ctx, id); err != nil {
		t.Fatalf("Revoke: %v", err)
	}
	_, err := toks.Verify(ctx, revoked)
	wantProblem(t, "Verify right after Revoke", err, problem.Forbidden, "this token was revoked")

	c.now = c.now.Add(time.Hour)
	if err := toks.Revoke(ctx, id); err != nil {
		t.Fatalf("second Revoke: %v", err)
	}
	_, err = toks.Verify(ctx, revoked)
	wantProblem(t, "Verify after a second Revoke", err, problem.Forbidden, "this token was revoked")
	if _, err := toks.Verify(ctx, kept); err != nil {
		t.Fatalf("Verify of another token of the same dataset: %v", err)
	}
	all, err := st.Tokens(ctx)
	if err != nil {
		t.Fatal(err)
	}
	for _, tok := range all {
		if tok.ID == id && !tok.RevokedAt.Equal(tokenStart.Add(time.Second)) {
			t.Errorf("revoked at %v, want the first revocation %v", tok.RevokedAt, tokenStart.Add(time.Second))
		}
	}
	wantProblem(t, "Revoke of an unknown id", toks.Revoke(ctx, id+100), problem.NotFound, "")
}

func TestTokenVerifyRefusesUnknownAndMalformed(t *testing.T) {
	ctx := context.Background()
	toks, st, _ := newTokens(t)
	shop := mustDataset(t, st, "shop")
	real, _ := mustCreate(t, toks, shop, "Mail tool")
	// The same shape as a real token, with one character changed.
	last := real[len(real)-1]
	flip := byte('a')
	if last == 'a' {
		flip = 'b'
	}
	changed := real[:len(real)-1] + string(flip)

	tests := []struct {
		name  string
		token string
	}{
		{"well-formed but never made", "ebb_" + strings.Repeat("a", 52)},
		{"one character changed", changed},
		{"upper case", strings.ToUpper(real)},
		{"without the ebb_ prefix", real[len("ebb_"):]},
		{"another prefix", "ebx_" + real[len("ebb_"):]},
		{"one character short", real[:len(real)-1]},
		{"one character long", real + "a"},
		{"trailing space", real + " "},
		{"with the scheme", "Bearer " + real},
		{"the stored prefix only", real[:auth.PrefixLen]},
		{"base32 padding", real[:len(real)-4] + "===="},
		{"outside the alphabet", real[:len(real)-1] + "1"},
		{"non-ASCII", real[:len(real)-2] + "é"},
		{"empty", ""},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			tok, err := toks.Verify(ctx, tt.token)
			wantProblem(t, "Verify", err, problem.Forbidden, "unknown token")
			if tok.ID != 0 || tok.DatasetID != 0 {
				t.Errorf("refused Verify returned token %+v", tok)
			}
		})
	}
	if _, err := toks.Verify(ctx, real); err != nil {
		t.Fatalf("Verify of the real token after the refusals: %v", err)
	}
}

// looseStore answers a lookup with a row whose hash differs, as a store
// with a careless comparison might; Verify must not trust it.
type looseStore struct{ auth.TokenStore }

func (s looseStore) TokenByHash(ctx context.Context, hash []byte) (auth.Token, error) {
	all, err := s.Tokens(ctx)
	if err != nil || len(all) == 0 {
		return auth.Token{}, problem.New(problem.NotFound, "no such token")
	}
	return all[0], nil
}

func TestTokenVerifyComparesTheHash(t *testing.T) {
	ctx := context.Background()
	toks, st, c := newTokens(t)
	shop := mustDataset(t, st, "shop")
	real, _ := mustCreate(t, toks, shop, "Mail tool")
	loose := &auth.Tokens{Store: looseStore{st}, Now: c.Now}

	if _, err := loose.Verify(ctx, real); err != nil {
		t.Fatalf("Verify of the real token through looseStore: %v", err)
	}
	_, err := loose.Verify(ctx, "ebb_"+strings.Repeat("a", 52))
	wantProblem(t, "Verify of another token through looseStore", err, problem.Forbidden, "unknown token")
}

func TestTokenLastUsedAtMostOnceAMinute(t *testing.T) {
	ctx := context.Background()
	toks, st, c := newTokens(t)
	shop := mustDataset(t, st, "shop")
	plaintext, id := mustCreate(t, toks, shop, "Mail tool")

	steps := []struct {
		name     string
		after    time.Duration // since the start
		wantUsed time.Duration // stored last_used_at, since the start
	}{
		{"first use", 10 * time.Second, 10 * time.Second},
		{"30 s later: not written", 40 * time.Second, 10 * time.Second},
		{"59 s after the last write: not written", 69 * time.Second, 10 * time.Second},
		{"a minute after the last write", 70 * time.Second, 70 * time.Second},
		{"an hour later", time.Hour, time.Hour},
	}
	for _, step := range steps {
		c.now = tokenStart.Add(step.after)
		if _, err := toks.Verify(ctx, plaintext); err != nil {
			t.Fatalf("%s: Verify: %v", step.name, err)
		}
		all, err := st.Tokens(ctx)
		if err != nil || len(all) != 1 || all[0].ID != id {
			t.Fatalf("%s: Tokens() = %+v, %v", step.name, all, err)
		}
		if want := tokenStart.Add(step.wantUsed); !all[0].LastUsedAt.Equal(want) {
			t.Errorf("%s: stored last used %v, want %v", step.name, all[0].LastUsedAt, want)
		}
	}
}

func TestTokensAreUnique(t *testing.T) {
	toks, st, _ := newTokens(t)
	shop := mustDataset(t, st, "shop")
	const n = 1000
	seen := make(map[string]bool, n)
	chars := map[rune]bool{}
	for range n {
		plaintext, _ := mustCreate(t, toks, shop, "Mail tool")
		if seen[plaintext] {
			t.Fatalf("token %q made twice", plaintext)
		}
		seen[plaintext] = true
		for _, r := range plaintext[len(auth.TokenPrefix):] {
			chars[r] = true
		}
	}
	// 1000 tokens of 52 characters use every one of the 32 characters; a
	// narrower spread means the encoding or the randomness is broken.
	if len(chars) != 32 {
		t.Errorf("tokens use %d distinct characters, want all 32 of lower-case base32", len(chars))
	}
	all, err := st.Tokens(context.Background())
	if err != nil || len(all) != n {
		t.Fatalf("Tokens() = %d, %v; want %d", len(all), err, n)
	}
}

// Cases follow RFC 6750 §2.1: credentials = "Bearer" 1*SP b64token.
func TestParseBearer(t *testing.T) {
	tests := []struct {
		name   string
		header string
		want   string
		wantOK bool
	}{
		{"canonical", "Bearer ebb_abc234", "ebb_abc234", true},
		{"lower-case scheme", "bearer ebb_abc234", "ebb_abc234", true},
		{"upper-case scheme", "BEARER ebb_abc234", "ebb_abc234", true},
		{"spaces around and between", "  Bearer   ebb_abc234  ", "ebb_abc234", true},
		{"token case kept", "Bearer EBB_Abc", "EBB_Abc", true},
		{"b64token with padding", "Bearer mF_9.B5f-4.1JqM+/a==", "mF_9.B5f-4.1JqM+/a==", true},
		{"empty", "", "", false},
		{"scheme only", "Bearer", "", false},
		{"scheme and spaces", "Bearer    ", "", false},
		{"no space after the scheme", "Bearerebb_abc234", "", false},
		{"tab instead of space", "Bearer\tebb_abc234", "", false},
		{"Basic scheme", "Basic YWRhOnNlY3JldA==", "", false},
		{"another scheme", "Token ebb_abc234", "", false},
		{"two values", "Bearer ebb_abc234 ebb_def567", "", false},
		{"comma-joined list", "Bearer ebb_abc234, Basic YWRh", "", false},
		{"padding only", "Bearer ==", "", false},
		{"padding inside", "Bearer ab=c", "", false},
		{"quoted token", `Bearer "ebb_abc234"`, "", false},
		{"whole header line", "Authorization: Bearer ebb_abc234", "", false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, ok := auth.ParseBearer(tt.header)
			if got != tt.want || ok != tt.wantOK {
				t.Fatalf("ParseBearer(%q) = %q, %v; want %q, %v", tt.header, got, ok, tt.want, tt.wantOK)
			}
		})
	}
}
