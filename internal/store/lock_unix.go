//go:build unix

package store

import (
	"errors"
	"os"
	"syscall"
)

// fileLock is an advisory flock(2) lock on a file beside the database.
type fileLock struct{ f *os.File }

// lockFile opens path and tries to lock it exclusively without waiting.
// alone reports whether that worked, i.e. no other Store in any process has
// the database open; otherwise the lock is taken shared.
func lockFile(path string) (l *fileLock, alone bool, err error) {
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o600)
	if err != nil {
		return nil, false, err
	}
	l = &fileLock{f: f}
	err = syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB)
	if err == nil {
		return l, true, nil
	}
	if !errors.Is(err, syscall.EWOULDBLOCK) {
		f.Close()
		return nil, false, err
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_SH); err != nil {
		f.Close()
		return nil, false, err
	}
	return l, false, nil
}

// share turns the lock into a shared one, letting other Stores open.
func (l *fileLock) share() error { return syscall.Flock(int(l.f.Fd()), syscall.LOCK_SH) }

func (l *fileLock) release() { l.f.Close() }
