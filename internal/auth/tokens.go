package auth

import (
	"context"
	"crypto/rand"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/base32"
	"fmt"
	"strings"
	"time"
	"unicode"
	"unicode/utf8"

	"ebb/internal/problem"
)

// Token is an API token as stored: never its plaintext, only the SHA-256 of
// it and its first PrefixLen characters, so admins can tell tokens apart.
type Token struct {
	ID          int64
	DatasetID   int64  // the one dataset whose published list the token may read
	DatasetName string // joined when read; ignored on insert
	Name        string // what the token is for, such as the campaign tool
	Hash        []byte // SHA-256 of the plaintext
	Prefix      string // the plaintext's first PrefixLen characters
	CreatedBy   string // name of the user who made it
	CreatedAt   time.Time
	RevokedAt   time.Time // zero while the token works
	LastUsedAt  time.Time // zero until first used
}

// Revoked reports whether the token was revoked.
func (t Token) Revoked() bool { return !t.RevokedAt.IsZero() }

// TokenStore is what Tokens needs from storage. Tokens are stored only as
// their SHA-256 hash.
type TokenStore interface {
	InsertToken(ctx context.Context, tok Token) (int64, error)     // problem.NotFound when the dataset does not exist
	TokenByHash(ctx context.Context, hash []byte) (Token, error)   // problem.NotFound
	Tokens(ctx context.Context) ([]Token, error)                   // all, newest first
	RevokeToken(ctx context.Context, id int64, at time.Time) error // problem.NotFound; a second revoke keeps the first time
	TouchToken(ctx context.Context, id int64, at time.Time) error  // sets last_used_at
}

// TokenPrefix starts every API token, so a token pasted in the wrong place
// (a log, a ticket, a repository) is recognisable as ebb's.
const TokenPrefix = "ebb_"

// PrefixLen is how many leading characters of a token are stored in the
// clear: TokenPrefix and 4 random characters (20 of the 256 random bits).
const PrefixLen = 8

// MaxTokenName is the longest token name, in characters.
const MaxTokenName = 80

// tokenBytes of randomness make a token: 256 bits. NIST SP 800-63B (§5.1.2.2
// on look-up secrets, recalled from memory) lets a secret of at least 112
// bits of entropy be stored as a plain approved hash, without salt or a slow
// key derivation; 256 bits is well beyond that, and SHA-256 is approved.
const tokenBytes = 32

// tokenEncoding is lower-case base32 (RFC 4648 alphabet) without padding:
// no look-alike 0/1/8, no characters that need escaping in a header, a URL
// or a shell, and one case so a token read aloud is typed right.
var tokenEncoding = base32.NewEncoding("abcdefghijklmnopqrstuvwxyz234567").WithPadding(base32.NoPadding)

// tokenLen is the length of every token this version makes.
var tokenLen = len(TokenPrefix) + tokenEncoding.EncodedLen(tokenBytes)

// touchEvery is how stale last_used_at may get: a tool polling every few
// seconds then costs one write a minute instead of one per request, which
// keeps the single writer free for imports and sign-ins.
const touchEvery = time.Minute

// Tokens makes, checks and revokes API tokens. A campaign tool sends its
// token as "Authorization: Bearer TOKEN" (RFC 6750, §2.1) to download the
// latest published at-risk list of the one dataset the token is scoped to.
// The plaintext is shown once, when the token is made; only its SHA-256 is
// stored, as for session tokens.
type Tokens struct {
	Store TokenStore
	Now   func() time.Time
}

// Create makes a token for one dataset and returns its plaintext, to be
// shown once, and its id. name says what the token is for (1 to
// MaxTokenName characters, spaces at either end dropped); createdBy names
// the admin making it. A dataset that does not exist is a NotFound problem.
func (t *Tokens) Create(ctx context.Context, datasetID int64, name, createdBy string) (plaintext string, id int64, err error) {
	name = strings.TrimSpace(name)
	if err := checkTokenName(name); err != nil {
		return "", 0, err
	}
	b := make([]byte, tokenBytes)
	rand.Read(b) // never fails (crypto/rand, Go 1.24 and later)
	plaintext = TokenPrefix + tokenEncoding.EncodeToString(b)
	h := sha256.Sum256([]byte(plaintext))
	id, err = t.Store.InsertToken(ctx, Token{
		DatasetID: datasetID, Name: name, Hash: h[:], Prefix: plaintext[:PrefixLen],
		CreatedBy: createdBy, CreatedAt: t.Now(),
	})
	if err != nil {
		return "", 0, err
	}
	return plaintext, id, nil
}

// checkTokenName validates a trimmed token name. The name is shown in the
// token list and in logs, so it must be one line of text.
func checkTokenName(name string) error {
	if name == "" {
		return problem.New(problem.Invalid, "A token needs a name, such as the campaign tool that will use it.")
	}
	if !utf8.ValidString(name) {
		return problem.New(problem.Invalid, "A token name must be text (UTF-8).")
	}
	if n := utf8.RuneCountInString(name); n > MaxTokenName {
		return problem.New(problem.Invalid, "A token name may have at most %d characters; this one has %d.", MaxTokenName, n)
	}
	if strings.IndexFunc(name, unicode.IsControl) >= 0 {
		return problem.New(problem.Invalid, "A token name must be one line without tabs or other control characters.")
	}
	return nil
}

// Verify checks a token's plaintext and returns the stored token; the
// caller must check that the token's DatasetID is the dataset asked for.
// A revoked token is a Forbidden problem "this token was revoked"; any
// other failure (malformed, unknown) is a Forbidden problem "unknown
// token", so a caller learns nothing about what a real token looks like
// beyond the published format. A successful check records the time in
// LastUsedAt, at most once a minute.
func (t *Tokens) Verify(ctx context.Context, plaintext string) (Token, error) {
	if !wellFormed(plaintext) {
		return Token{}, unknownToken() // a malformed token cannot match; spare the database
	}
	h := sha256.Sum256([]byte(plaintext))
	tok, err := t.Store.TokenByHash(ctx, h[:])
	if problem.Is(err, problem.NotFound) {
		return Token{}, unknownToken()
	}
	if err != nil {
		return Token{}, fmt.Errorf("verify token %s: %w", plaintext[:PrefixLen], err)
	}
	// The lookup already matched the hash; comparing again in constant time
	// guards against a store whose comparison is looser (a collation, a
	// prefix match) without adding a timing signal.
	if subtle.ConstantTimeCompare(tok.Hash, h[:]) != 1 {
		return Token{}, unknownToken()
	}
	if tok.Revoked() {
		return Token{}, problem.New(problem.Forbidden, "this token was revoked")
	}
	now := t.Now()
	if tok.LastUsedAt.IsZero() || now.Sub(tok.LastUsedAt) >= touchEvery {
		if err := t.Store.TouchToken(ctx, tok.ID, now); err != nil {
			return Token{}, fmt.Errorf("record use of token %d: %w", tok.ID, err)
		}
		tok.LastUsedAt = now
	}
	return tok, nil
}

func unknownToken() error { return problem.New(problem.Forbidden, "unknown token") }

// wellFormed reports whether s has the shape of a token this version makes:
// TokenPrefix, then lower-case base32 of tokenBytes bytes.
func wellFormed(s string) bool {
	if len(s) != tokenLen || !strings.HasPrefix(s, TokenPrefix) {
		return false
	}
	for _, c := range s[len(TokenPrefix):] {
		if !(c >= 'a' && c <= 'z' || c >= '2' && c <= '7') {
			return false
		}
	}
	return true
}

// Revoke ends a token at once; revoking a revoked token keeps its first
// revocation time. An unknown id is a NotFound problem.
func (t *Tokens) Revoke(ctx context.Context, id int64) error {
	return t.Store.RevokeToken(ctx, id, t.Now())
}

// ParseBearer reads the value of an Authorization header of the form
// "Bearer TOKEN" (RFC 6750, §2.1) and returns TOKEN. The scheme is matched
// without regard to case (RFC 9110, §11.1), spaces around the value and
// between scheme and token are dropped, and TOKEN must be an RFC 6750
// b64token (letters, digits, - . _ ~ + /, then optional '='), so a header
// carrying two values or a comma-joined list is refused.
func ParseBearer(header string) (string, bool) {
	scheme, rest, ok := strings.Cut(strings.TrimSpace(header), " ")
	if !ok || !strings.EqualFold(scheme, "Bearer") {
		return "", false
	}
	tok := strings.TrimLeft(rest, " ")
	if !isB64Token(tok) {
		return "", false
	}
	return tok, true
}

// isB64Token reports whether s matches RFC 6750's
// b64token = 1*( ALPHA / DIGIT / "-" / "." / "_" / "~" / "+" / "/" ) *"=".
func isB64Token(s string) bool {
	body := strings.TrimRight(s, "=")
	if body == "" {
		return false
	}
	for _, c := range body {
		ok := c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || strings.ContainsRune("-._~+/", c)
		if !ok {
			return false
		}
	}
	return true
}
