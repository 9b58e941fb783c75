//go:build !(linux || darwin || freebsd || netbsd || openbsd || dragonfly || solaris)

package outlock

import "os"

// tryLock has no advisory file lock to use on this system: batch warns
// that it cannot keep a second run out of the folder and goes on.
func tryLock(f *os.File, exclusive bool) (bool, error) { return false, ErrUnsupported }

func unlock(f *os.File) {}

// IsLinkLoop cannot tell a looping link apart here: the caller reports
// the system's message.
func IsLinkLoop(err error) bool { return false }

// noFollow: no flag to refuse links here; the lock is not taken anyway.
const noFollow = 0
