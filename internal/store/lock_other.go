//go:build !unix

package store

// fileLock is a no-op where flock(2) is missing: every Open purges, which
// is right as long as one process uses the database at a time.
type fileLock struct{}

func lockFile(string) (*fileLock, bool, error) { return &fileLock{}, true, nil }
func (*fileLock) share() error                 { return nil }
func (*fileLock) release()                     {}
