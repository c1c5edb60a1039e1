package auth

import (
	"context"
	"crypto/hmac"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/base32"
	"encoding/hex"
	"fmt"
	"math"
	"strings"
	"time"

	"ebb/internal/problem"
)

// Accounts signs users in and manages them.
type Accounts struct {
	Store    Store
	Hasher   Hasher
	Throttle *Throttle
	Now      func() time.Time
}

// Authenticate checks a sign-in attempt from addr. Every failure reads the
// same ("wrong user name or password"), whether the name exists, the
// password is wrong or the user is disabled, and takes as long.
func (a *Accounts) Authenticate(ctx context.Context, name, password, addr string) (User, error) {
	if wait, blocked := a.Throttle.Blocked(name, addr); blocked {
		mins := int(math.Ceil(wait.Minutes()))
		return User{}, problem.New(problem.Forbidden, "Too many failed sign-ins. Try again in %d minute%s.", mins, plural(mins))
	}
	u, hash, err := a.Store.UserByName(ctx, name)
	if err != nil && !problem.Is(err, problem.NotFound) {
		return User{}, err
	}
	if err != nil {
		a.Hasher.Matches(string(dummyHash), password) // same time as a real check
	}
	if err != nil || !a.Hasher.Matches(hash, password) || u.Disabled {
		a.Throttle.Fail(name, addr)
		return User{}, problem.New(problem.Invalid, "Wrong user name or password.")
	}
	a.Throttle.Succeed(name)
	return u, nil
}

func plural(n int) string {
	if n == 1 {
		return ""
	}
	return "s"
}

// Create adds a user.
func (a *Accounts) Create(ctx context.Context, name string, role Role, password string) (User, error) {
	if err := CheckName(name); err != nil {
		return User{}, err
	}
	if err := CheckPassword(password); err != nil {
		return User{}, err
	}
	hash, err := a.Hasher.Hash(password)
	if err != nil {
		return User{}, err
	}
	now := a.Now()
	u := User{Name: name, Role: role, CreatedAt: now, PasswordSetAt: now}
	if u.ID, err = a.Store.InsertUser(ctx, u, hash); err != nil {
		return User{}, err
	}
	return u, nil
}

// ChangePassword sets a user's own new password after checking the old one.
func (a *Accounts) ChangePassword(ctx context.Context, u User, old, new string) error {
	_, hash, err := a.Store.UserByName(ctx, u.Name)
	if err != nil {
		return err
	}
	if !a.Hasher.Matches(hash, old) {
		return problem.New(problem.Invalid, "The current password is wrong.")
	}
	return a.setPassword(ctx, u.ID, new)
}

// Reset gives a user a new random password and returns it (to show once).
func (a *Accounts) Reset(ctx context.Context, id int64) (string, error) {
	pw := NewPassword()
	return pw, a.setPassword(ctx, id, pw)
}

func (a *Accounts) setPassword(ctx context.Context, id int64, pw string) error {
	if err := CheckPassword(pw); err != nil {
		return err
	}
	hash, err := a.Hasher.Hash(pw)
	if err != nil {
		return err
	}
	return a.Store.SetPassword(ctx, id, hash, a.Now())
}

// DemoPassword derives a demo user's password from the installation's
// session key, so the same password can be printed at every start without
// being stored anywhere, and differs between installations.
func DemoPassword(key []byte, name string) string {
	m := hmac.New(sha256.New, key)
	m.Write([]byte("ebb demo password\x00" + name))
	return strings.ToLower(base32.StdEncoding.WithPadding(base32.NoPadding).EncodeToString(m.Sum(nil)[:10]))
}

// SetupToken derives the one-time token of the first-run setup link from
// a random nonce kept in settings; TokensEqual compares in constant time.
func SetupToken(nonce []byte) string { return hex.EncodeToString(nonce) }

// TokensEqual compares two tokens without leaking where they differ.
func TokensEqual(a, b string) bool { return subtle.ConstantTimeCompare([]byte(a), []byte(b)) == 1 }

// Describe names a user for logs: name and role.
func (u User) Describe() string { return fmt.Sprintf("%s (%s)", u.Name, u.Role) }
