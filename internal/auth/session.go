package auth

import (
	"context"
	"crypto/rand"
	"crypto/sha256"
	"encoding/base64"
	"encoding/hex"
	"errors"
	"fmt"
	"net/http"
	"time"

	"github.com/gorilla/securecookie"
	"github.com/gorilla/sessions"

	"ebb/internal/problem"
)

// SessionRow is a session as stored.
type SessionRow struct {
	UserID    int64
	CreatedAt time.Time
	SeenAt    time.Time
	ExpiresAt time.Time
	Flash     string
}

// SessionStore is what Sessions needs from storage. Tokens are stored only
// as their SHA-256 hash.
type SessionStore interface {
	InsertSession(ctx context.Context, tokenHash string, row SessionRow) error
	SessionByHash(ctx context.Context, tokenHash string) (SessionRow, error) // problem.NotFound
	TouchSession(ctx context.Context, tokenHash string, seen time.Time) error
	SetSessionFlash(ctx context.Context, tokenHash, flash string) error
	DeleteSession(ctx context.Context, tokenHash string) error
}

// Session value keys.
const (
	keyUser  = "user_id"
	keyFlash = "_flash"
)

// Sessions is a gorilla/sessions Store whose sessions live in the database:
// the cookie carries a random 256-bit token signed with the installation
// key, nothing else.
type Sessions struct {
	rows     SessionStore
	codec    *securecookie.SecureCookie
	now      func() time.Time
	Name     string        // cookie name
	Idle     time.Duration // a session unused this long ends
	Absolute time.Duration // a session ends this long after sign-in
	Secure   bool          // set the Secure flag (TLS, or behind a TLS proxy)
}

// KeyLengths are the accepted lengths in bytes of a session signing key.
var KeyLengths = []int{32, 64}

// ParseKey reads a hex session key and checks its length.
func ParseKey(hexKey string) ([]byte, error) {
	k, err := hex.DecodeString(hexKey)
	if err != nil {
		return nil, fmt.Errorf("session key is not hex: %w", err)
	}
	if len(k) != 32 && len(k) != 64 {
		return nil, fmt.Errorf("session key has %d bytes; want 32 or 64 (64 or 128 hex digits)", len(k))
	}
	return k, nil
}

// NewKey returns a new random 32-byte session key.
func NewKey() []byte {
	k := make([]byte, 32)
	rand.Read(k)
	return k
}

// NewSessions returns a store signing cookies with key (32 or 64 bytes).
func NewSessions(rows SessionStore, key []byte, now func() time.Time) (*Sessions, error) {
	if len(key) != 32 && len(key) != 64 {
		return nil, fmt.Errorf("session key has %d bytes; want 32 or 64", len(key))
	}
	codec := securecookie.New(key, nil)
	codec.SetSerializer(securecookie.NopEncoder{})
	codec.MaxAge(0) // expiry is enforced server-side
	return &Sessions{rows: rows, codec: codec, now: now, Name: "ebb_session",
		Idle: 8 * time.Hour, Absolute: 7 * 24 * time.Hour}, nil
}

func hashToken(token string) string {
	h := sha256.Sum256([]byte(token))
	return hex.EncodeToString(h[:])
}

// Get returns the request's session, cached per request (sessions.Store).
func (s *Sessions) Get(r *http.Request, name string) (*sessions.Session, error) {
	return sessions.GetRegistry(r).Get(s, name)
}

// New loads the session named by the request's cookie, or starts an empty
// one when there is none or it has ended (sessions.Store).
func (s *Sessions) New(r *http.Request, name string) (*sessions.Session, error) {
	sess := sessions.NewSession(s, name)
	sess.Options = s.options()
	sess.IsNew = true
	c, err := r.Cookie(name)
	if err != nil {
		return sess, nil
	}
	var raw []byte
	if err := s.codec.Decode(name, c.Value, &raw); err != nil {
		return sess, nil // a forged or stale cookie is just no session
	}
	token := string(raw)
	th := hashToken(token)
	row, err := s.rows.SessionByHash(r.Context(), th)
	if problem.Is(err, problem.NotFound) {
		return sess, nil
	}
	if err != nil {
		return sess, fmt.Errorf("load session: %w", err)
	}
	now := s.now()
	if now.After(row.ExpiresAt) || now.Sub(row.SeenAt) > s.Idle {
		if err := s.rows.DeleteSession(r.Context(), th); err != nil {
			return sess, fmt.Errorf("end expired session: %w", err)
		}
		return sess, nil
	}
	if now.Sub(row.SeenAt) > time.Minute {
		if err := s.rows.TouchSession(r.Context(), th, now); err != nil {
			return sess, fmt.Errorf("touch session: %w", err)
		}
	}
	sess.ID = token
	sess.IsNew = false
	sess.Values[keyUser] = row.UserID
	if row.Flash != "" {
		sess.Values[keyFlash] = []any{row.Flash}
	}
	return sess, nil
}

// Save writes the session: a session with a user gets a row and a cookie;
// MaxAge < 0 deletes the row and the cookie (sessions.Store).
func (s *Sessions) Save(r *http.Request, w http.ResponseWriter, sess *sessions.Session) error {
	ctx := r.Context()
	if sess.Options != nil && sess.Options.MaxAge < 0 {
		if sess.ID != "" {
			if err := s.rows.DeleteSession(ctx, hashToken(sess.ID)); err != nil {
				return fmt.Errorf("end session: %w", err)
			}
		}
		http.SetCookie(w, sessions.NewCookie(sess.Name(), "", sess.Options))
		return nil
	}
	uid, _ := sess.Values[keyUser].(int64)
	if uid == 0 {
		return nil // nothing worth a row
	}
	flash := ""
	if fl, ok := sess.Values[keyFlash].([]any); ok && len(fl) > 0 {
		flash, _ = fl[len(fl)-1].(string)
	}
	if sess.ID == "" {
		b := make([]byte, 32)
		rand.Read(b)
		sess.ID = base64.RawURLEncoding.EncodeToString(b)
		now := s.now()
		if err := s.rows.InsertSession(ctx, hashToken(sess.ID), SessionRow{
			UserID: uid, CreatedAt: now, SeenAt: now, ExpiresAt: now.Add(s.Absolute), Flash: flash,
		}); err != nil {
			return fmt.Errorf("start session: %w", err)
		}
	} else if err := s.rows.SetSessionFlash(ctx, hashToken(sess.ID), flash); err != nil {
		return fmt.Errorf("save session: %w", err)
	}
	enc, err := s.codec.Encode(sess.Name(), []byte(sess.ID))
	if err != nil {
		return fmt.Errorf("encode session cookie: %w", err)
	}
	http.SetCookie(w, sessions.NewCookie(sess.Name(), enc, sess.Options))
	return nil
}

func (s *Sessions) options() *sessions.Options {
	return &sessions.Options{
		Path:     "/",
		MaxAge:   int(s.Absolute / time.Second),
		Secure:   s.Secure,
		HttpOnly: true,
		SameSite: http.SameSiteLaxMode,
	}
}

// UserID returns the signed-in user's id, or 0.
func UserID(sess *sessions.Session) int64 {
	id, _ := sess.Values[keyUser].(int64)
	return id
}

// SignIn ends the request's current session, if any, and starts a new one
// for userID, so a session id known before sign-in is worthless after it
// (session fixation).
func (s *Sessions) SignIn(w http.ResponseWriter, r *http.Request, userID int64) error {
	old, err := s.Get(r, s.Name)
	if err != nil {
		return err
	}
	if !old.IsNew {
		old.Options.MaxAge = -1
		if err := s.Save(r, w, old); err != nil {
			return err
		}
	}
	sess := sessions.NewSession(s, s.Name)
	sess.Options = s.options()
	sess.Values[keyUser] = userID
	return s.Save(r, w, sess)
}

// SignOut ends the request's session.
func (s *Sessions) SignOut(w http.ResponseWriter, r *http.Request) error {
	sess, err := s.Get(r, s.Name)
	if err != nil {
		return err
	}
	sess.Options.MaxAge = -1
	return s.Save(r, w, sess)
}

// Flash stores a one-line message shown on the next page of this session.
func (s *Sessions) Flash(w http.ResponseWriter, r *http.Request, msg string) error {
	sess, err := s.Get(r, s.Name)
	if err != nil {
		return err
	}
	if sess.IsNew {
		return nil
	}
	sess.Values[keyFlash] = []any{msg}
	return s.Save(r, w, sess)
}

// TakeFlash returns and clears the session's message.
func (s *Sessions) TakeFlash(w http.ResponseWriter, r *http.Request) (string, error) {
	sess, err := s.Get(r, s.Name)
	if err != nil || sess.IsNew {
		return "", err
	}
	fl, _ := sess.Values[keyFlash].([]any)
	if len(fl) == 0 {
		return "", nil
	}
	delete(sess.Values, keyFlash)
	msg, _ := fl[0].(string)
	return msg, s.Save(r, w, sess)
}

// ErrNoSession is returned when a request has no signed-in session.
var ErrNoSession = errors.New("not signed in")
