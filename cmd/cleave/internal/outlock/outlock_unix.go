//go:build linux || darwin || freebsd || netbsd || openbsd || dragonfly || solaris

package outlock

import (
	"errors"
	"fmt"
	"os"

	"golang.org/x/sys/unix"
)

// tryLock asks flock(2) for an exclusive or shared lock on f without
// waiting: false when another open file holds a conflicting lock.
// Converting a held lock is allowed (flock(2) replaces it).
func tryLock(f *os.File, exclusive bool) (bool, error) {
	how := unix.LOCK_SH | unix.LOCK_NB
	if exclusive {
		how = unix.LOCK_EX | unix.LOCK_NB
	}
	for {
		err := unix.Flock(int(f.Fd()), how)
		switch {
		case err == nil:
			return true, nil
		case errors.Is(err, unix.EINTR):
			continue
		case errors.Is(err, unix.EWOULDBLOCK), errors.Is(err, unix.EAGAIN):
			return false, nil
		case errors.Is(err, unix.ENOLCK), errors.Is(err, unix.EOPNOTSUPP), errors.Is(err, unix.ENOTSUP), errors.Is(err, unix.ENOSYS):
			return false, fmt.Errorf("%w (flock: %v)", ErrUnsupported, err)
		default:
			return false, err
		}
	}
}

func unlock(f *os.File) { unix.Flock(int(f.Fd()), unix.LOCK_UN) }

// IsLinkLoop reports whether err says a chain of symbolic links loops.
func IsLinkLoop(err error) bool { return errors.Is(err, unix.ELOOP) }

// noFollow makes opening the lock file fail on a symbolic link.
const noFollow = unix.O_NOFOLLOW
