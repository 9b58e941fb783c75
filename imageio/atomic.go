package imageio

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
)

// ErrExists is returned (wrapped with the path) when an output file exists
// and overwriting was not allowed.
var ErrExists = errors.New("output exists (overwriting needs force)")

// ErrIsFolder is returned (wrapped with the path) when an output path is
// an existing folder: a file cannot replace it.
var ErrIsFolder = errors.New("a folder stands in the way of this output file")

// tempMark separates the target's name from the owner in a temporary
// file's name.
const tempMark = ".tmp-"

// DefaultTempOwner is the owner tag of temporary files when none is given:
// "pid" and the process id.
func DefaultTempOwner() string { return "pid" + strconv.Itoa(os.Getpid()) }

func validOwner(owner string) bool {
	if owner == "" || len(owner) > 64 {
		return false
	}
	for _, c := range owner {
		if !(c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '-') {
			return false
		}
	}
	return true
}

// ParseTempName reports whether name is the name of a temporary file of
// WriteAtomicAs, "." + target + ".tmp-" + owner + "-" + digits, and returns
// the target and the owner. Temporary files of earlier versions,
// "." + target + ".tmp-" + digits, have the owner "".
func ParseTempName(name string) (target, owner string, ok bool) {
	i := strings.LastIndex(name, tempMark)
	if !strings.HasPrefix(name, ".") || i < 1 {
		return "", "", false
	}
	rest := name[i+len(tempMark):]
	digits := rest
	if j := strings.LastIndexByte(rest, '-'); j >= 0 {
		owner, digits = rest[:j], rest[j+1:]
		if !validOwner(owner) {
			return "", "", false
		}
	}
	if digits == "" {
		return "", "", false
	}
	for _, c := range digits {
		if c < '0' || c > '9' {
			return "", "", false
		}
	}
	return name[1:i], owner, true
}

// WriteAtomic is WriteAtomicAs with the default owner, this process
// ("pid" and its process id).
func WriteAtomic(path string, force bool, write func(io.Writer) error) error {
	return WriteAtomicAs(path, force, "", write)
}

// WriteAtomicAs writes a file so that readers see either the old content
// or the complete new content, never a partial file: write streams into a
// temporary file in the same folder, which is flushed, fsynced and renamed
// over path (rename within one file system is atomic, POSIX rename(2)).
// The temporary file is removed on any error, including a panic in write.
// Without force an existing path is refused with ErrExists; the final step
// then uses link(2), which fails if path appeared meanwhile, falling back to
// a check and rename on file systems without hard links. A folder at path
// is refused even with force.
//
// The temporary file is named "." + base of path + ".tmp-" + owner + "-" +
// random digits (ParseTempName reads it back), so that several processes writing into one folder can tell their
// temporary files apart (a process killed mid-write leaves one behind;
// only its owner, or a clean-up that knows no writer is left, may remove
// it). owner is a short tag of letters, digits and hyphens; "" means
// "pid" followed by this process's id.
func WriteAtomicAs(path string, force bool, owner string, write func(io.Writer) error) (err error) {
	if owner == "" {
		owner = DefaultTempOwner()
	}
	if !validOwner(owner) {
		return fmt.Errorf("%s: temporary file owner %q must be letters, digits and hyphens", path, owner)
	}
	if st, err := os.Lstat(path); err == nil {
		if st.IsDir() {
			return fmt.Errorf("%s: %w", path, ErrIsFolder)
		}
		if !force {
			return fmt.Errorf("%s: %w", path, ErrExists)
		}
	}
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	tmp, err := os.CreateTemp(dir, "."+base+tempMark+owner+"-*")
	if err != nil {
		return fmt.Errorf("%s: cannot create a file in %s: %w", path, dir, err)
	}
	tmpName := tmp.Name()
	pending.add(tmpName)
	defer pending.remove(tmpName)
	done := false
	defer func() {
		if !done {
			tmp.Close()
			os.Remove(tmpName)
		}
	}()
	bw := bufio.NewWriterSize(tmp, 1<<16)
	if err := write(bw); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err := tmp.Chmod(0o644); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err := tmp.Sync(); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err := tmp.Close(); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if force {
		if err := os.Rename(tmpName, path); err != nil {
			return fmt.Errorf("%s: %w", path, err)
		}
	} else if err := os.Link(tmpName, path); err == nil {
		os.Remove(tmpName)
	} else if errors.Is(err, os.ErrExist) {
		return fmt.Errorf("%s: %w", path, ErrExists)
	} else {
		if _, err := os.Lstat(path); err == nil {
			return fmt.Errorf("%s: %w", path, ErrExists)
		}
		if err := os.Rename(tmpName, path); err != nil {
			return fmt.Errorf("%s: %w", path, err)
		}
	}
	done = true
	// Persist the directory entry too (common practice after rename).
	if d, err := os.Open(dir); err == nil {
		d.Sync()
		d.Close()
	}
	return nil
}

// pendingSet holds the temporary files of the writes under way.
type pendingSet struct {
	mu     sync.Mutex
	names  map[string]bool
	closed bool // RemovePendingWrites ran: the process is exiting
}

var pending = &pendingSet{names: map[string]bool{}}

func (p *pendingSet) add(name string) {
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.closed {
		os.Remove(name)
		return
	}
	p.names[name] = true
}

func (p *pendingSet) remove(name string) {
	p.mu.Lock()
	delete(p.names, name)
	p.mu.Unlock()
}

// RemovePendingWrites removes the temporary files of every WriteAtomic
// still under way, for a process about to exit without waiting for them
// (a second interrupt): the files they were to replace keep their old
// content, and no temporary file is left behind. Writes that go on
// afterwards fail at their rename, and so do writes started later.
func RemovePendingWrites() {
	pending.mu.Lock()
	defer pending.mu.Unlock()
	pending.closed = true
	for name := range pending.names {
		os.Remove(name)
	}
}
