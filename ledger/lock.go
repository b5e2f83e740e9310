package ledger

import (
	"context"
	"errors"
	"fmt"
	"os"
	"time"
)

// ErrLocked is the cause of a LockError: another run holds the lock.
var ErrLocked = errors.New("ledger: locked by another run")

// LockError is a lock that could not be taken in time.
type LockError struct {
	Path string        // the lock file
	Wait time.Duration // how long Lock waited
	Err  error
}

func (e *LockError) Error() string {
	if e.Wait > 0 {
		return fmt.Sprintf("ledger: %s: %v (waited %s; see --lock-wait)", e.Path, e.Err, e.Wait)
	}
	return fmt.Sprintf("ledger: %s: %v (see --lock-wait)", e.Path, e.Err)
}

func (e *LockError) Unwrap() error { return e.Err }

// LockPath returns the lock file of the ledger at ledgerPath: the path with ".lock".
func LockPath(ledgerPath string) string { return ledgerPath + ".lock" }

// lockPoll is how often Lock retries while it waits.
const lockPoll = 50 * time.Millisecond

// FileLock is a held lock; Unlock releases it.
type FileLock struct {
	f *os.File
}

// Lock takes the exclusive lock of the ledger at ledgerPath (the file LockPath(ledgerPath),
// created if missing). When another process or another open of the file holds it, Lock retries
// until wait has passed (wait 0: it fails at once) and then returns a *LockError wrapping
// ErrLocked; a cancelled ctx stops the wait with ctx's error. The lock is released by Unlock or
// when the process exits.
func Lock(ctx context.Context, ledgerPath string, wait time.Duration) (*FileLock, error) {
	path := LockPath(ledgerPath)
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return nil, fmt.Errorf("ledger: lock: %w", err)
	}
	deadline := time.Now().Add(wait)
	for {
		ok, err := tryLock(f)
		if err != nil {
			f.Close()
			return nil, fmt.Errorf("ledger: lock %s: %w", path, err)
		}
		if ok {
			return &FileLock{f: f}, nil
		}
		left := time.Until(deadline)
		if left <= 0 {
			f.Close()
			return nil, &LockError{Path: path, Wait: wait, Err: ErrLocked}
		}
		t := time.NewTimer(min(left, lockPoll))
		select {
		case <-ctx.Done():
			t.Stop()
			f.Close()
			return nil, ctx.Err()
		case <-t.C:
		}
	}
}

// Unlock releases the lock. The lock file stays.
func (l *FileLock) Unlock() error {
	if l == nil || l.f == nil {
		return nil
	}
	err := unlock(l.f)
	if cerr := l.f.Close(); err == nil {
		err = cerr
	}
	l.f = nil
	return err
}
