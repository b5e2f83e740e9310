//go:build !unix

package ledger

import (
	"errors"
	"os"
)

var errNoFlock = errors.New("file locking is supported only on Unix systems")

func tryLock(*os.File) (bool, error) { return false, errNoFlock }

func unlock(*os.File) error { return errNoFlock }
