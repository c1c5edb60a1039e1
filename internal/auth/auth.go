// Package auth holds ebb's users, roles, password hashing, sign-in
// throttling and server-side sessions.
//
// Roles are nested: a viewer (marketing) sees published lists and outcomes;
// an analyst also works with datasets, uploads, windows and models; an admin
// also manages users and settings. Passwords are hashed with bcrypt
// (Provos & Mazières, "A Future-Adaptable Password Scheme", 1999). A
// session cookie carries only a random token, signed with the installation's
// key; the session itself lives in the database, so signing out or
// disabling a user ends it at once.
package auth

import (
	"context"
	"crypto/rand"
	"encoding/base32"
	"fmt"
	"strings"
	"time"
	"unicode/utf8"

	"golang.org/x/crypto/bcrypt"

	"ebb/internal/problem"
)

// Role is what a user may do; a higher role includes the lower ones.
type Role int

const (
	Viewer Role = iota + 1
	Analyst
	Admin
)

// Roles lists the roles from least to most allowed.
var Roles = []Role{Viewer, Analyst, Admin}

func (r Role) String() string {
	switch r {
	case Viewer:
		return "viewer"
	case Analyst:
		return "analyst"
	case Admin:
		return "admin"
	}
	return fmt.Sprintf("role(%d)", int(r))
}

// ParseRole reads "viewer", "analyst" or "admin".
func ParseRole(s string) (Role, error) {
	for _, r := range Roles {
		if r.String() == s {
			return r, nil
		}
	}
	return 0, problem.New(problem.Invalid, "unknown role %q (want viewer, analyst or admin)", s)
}

// Allows reports whether a user with role r may do what needs role need.
func (r Role) Allows(need Role) bool { return r >= need }

// User is a person who signs in.
type User struct {
	ID            int64
	Name          string
	Role          Role
	Disabled      bool
	CreatedAt     time.Time
	PasswordSetAt time.Time
}

// CheckName validates a user name: 1–64 characters of letters, digits and
// . _ @ -.
func CheckName(name string) error {
	if name == "" || len(name) > 64 {
		return problem.New(problem.Invalid, "a user name has 1 to 64 characters")
	}
	for _, c := range name {
		ok := c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || strings.ContainsRune("._@-", c)
		if !ok {
			return problem.New(problem.Invalid, "a user name may contain letters, digits and . _ @ - only")
		}
	}
	return nil
}

// MinPassword and MaxPassword bound password length. The minimum follows
// NIST SP 800-63B (at least 8; we ask for 10); bcrypt reads at most 72 bytes.
const (
	MinPassword = 10
	MaxPassword = 72
)

// CheckPassword validates a new password's length.
func CheckPassword(pw string) error {
	if utf8.RuneCountInString(pw) < MinPassword {
		return problem.New(problem.Invalid, "a password needs at least %d characters", MinPassword)
	}
	if len(pw) > MaxPassword {
		return problem.New(problem.Invalid, "a password may have at most %d bytes", MaxPassword)
	}
	return nil
}

// Hasher hashes and checks passwords with bcrypt at a fixed cost.
type Hasher struct{ Cost int }

// DefaultCost is bcrypt's default work factor (2^10 rounds).
const DefaultCost = bcrypt.DefaultCost

// Hash returns the bcrypt hash of pw.
func (h Hasher) Hash(pw string) (string, error) {
	cost := h.Cost
	if cost == 0 {
		cost = DefaultCost
	}
	b, err := bcrypt.GenerateFromPassword([]byte(pw), cost)
	if err != nil {
		return "", fmt.Errorf("hash password: %w", err)
	}
	return string(b), nil
}

// Matches reports whether pw matches the hash.
func (h Hasher) Matches(hash, pw string) bool {
	return bcrypt.CompareHashAndPassword([]byte(hash), []byte(pw)) == nil
}

// dummyHash is checked against when a user name does not exist, so that
// an unknown name takes as long as a wrong password.
var dummyHash, _ = bcrypt.GenerateFromPassword([]byte("no such user here"), bcrypt.MinCost)

// NewPassword returns a random password of 16 characters from an alphabet
// without look-alikes, for resets and generated accounts (80 bits).
func NewPassword() string {
	b := make([]byte, 10)
	rand.Read(b)
	return strings.ToLower(base32.StdEncoding.WithPadding(base32.NoPadding).EncodeToString(b))
}

// Store is what auth needs from storage.
type Store interface {
	UserByName(ctx context.Context, name string) (User, string, error) // user and password hash; problem.NotFound
	UserByID(ctx context.Context, id int64) (User, error)
	CountUsers(ctx context.Context) (int, error)
	InsertUser(ctx context.Context, u User, hash string) (int64, error) // problem.Conflict on a taken name
	SetPassword(ctx context.Context, id int64, hash string, at time.Time) error
	SetDisabled(ctx context.Context, id int64, disabled bool) error // also ends the user's sessions
	Users(ctx context.Context) ([]User, error)
}
