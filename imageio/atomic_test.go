package imageio

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// dirNames lists a folder's entries.
func dirNames(t *testing.T, dir string) []string {
	t.Helper()
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range es {
		names = append(names, e.Name())
	}
	return names
}

func writeString(s string) func(io.Writer) error {
	return func(w io.Writer) error { _, err := io.WriteString(w, s); return err }
}

// TestWriteAtomic checks the contract stated on WriteAtomic (atomic
// replacement by rename(2), POSIX.1-2017): content appears whole, an
// existing file is kept without force and replaced with it, and no
// temporary file survives a failing or panicking writer.
func TestWriteAtomic(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "out.txt")

	if err := WriteAtomic(path, false, writeString("first")); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(path); string(b) != "first" {
		t.Fatalf("content %q; want first", b)
	}

	// Refuses an existing file without force, leaving it as it was.
	err := WriteAtomic(path, false, writeString("second"))
	if !errors.Is(err, ErrExists) || !strings.Contains(err.Error(), path) {
		t.Fatalf("existing file without force: got %v; want ErrExists naming %s", err, path)
	}
	if b, _ := os.ReadFile(path); string(b) != "first" {
		t.Fatalf("content after refusal %q; want first", b)
	}

	// Overwrites with force.
	if err := WriteAtomic(path, true, writeString("third")); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(path); string(b) != "third" {
		t.Fatalf("content after force %q; want third", b)
	}

	// A failing writer leaves neither the target nor a temporary file, and
	// its error comes back.
	boom := errors.New("boom")
	failed := filepath.Join(dir, "failed.txt")
	err = WriteAtomic(failed, false, func(w io.Writer) error {
		io.WriteString(w, strings.Repeat("x", 1<<17)) // past the buffer, so bytes reach the temp file
		return boom
	})
	if !errors.Is(err, boom) || !strings.Contains(err.Error(), failed) {
		t.Fatalf("got %v; want boom naming the file", err)
	}
	// A failing overwrite keeps the old content.
	if err := WriteAtomic(path, true, func(io.Writer) error { return boom }); !errors.Is(err, boom) {
		t.Fatalf("got %v; want boom", err)
	}
	if b, _ := os.ReadFile(path); string(b) != "third" {
		t.Fatalf("content after failed overwrite %q; want third", b)
	}
	// A panicking writer also leaves no temporary file.
	func() {
		defer func() { recover() }()
		WriteAtomic(filepath.Join(dir, "panic.txt"), false, func(io.Writer) error { panic("writer bug") })
	}()
	if names := dirNames(t, dir); len(names) != 1 || names[0] != "out.txt" {
		t.Fatalf("folder holds %v; want only out.txt", names)
	}
	if fi, err := os.Stat(path); err != nil || fi.Mode().Perm() != 0o644 {
		t.Errorf("mode %v, %v; want 0644", fi.Mode().Perm(), err)
	}
}

// TestWriteAtomicUnwritableFolder: a folder that does not exist, and a
// "folder" that is a regular file, give an error naming the path. (Tests
// run as root here, for whom permission bits do not stop writes, so a
// read-only folder cannot stand in.)
func TestWriteAtomicUnwritableFolder(t *testing.T) {
	dir := t.TempDir()
	file := filepath.Join(dir, "plain")
	if err := os.WriteFile(file, []byte("x"), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, path := range []string{filepath.Join(dir, "missing", "out.png"), filepath.Join(file, "out.png")} {
		err := WriteAtomic(path, true, writeString("data"))
		if err == nil || !strings.Contains(err.Error(), path) {
			t.Errorf("%s: got %v; want an error naming it", path, err)
		}
	}
	if names := dirNames(t, dir); len(names) != 1 {
		t.Errorf("folder holds %v; want only the plain file", names)
	}
}

// Temporary names say whose they are: "." + target + ".tmp-" + owner +
// "-" + digits (os.CreateTemp replaces * by a decimal number), and the
// names of earlier versions without an owner are still recognised so that
// a clean-up finds them.
func TestTempNames(t *testing.T) {
	dir := t.TempDir()
	var seen []string
	for _, owner := range []string{"", "shard2of4-pid77"} {
		err := WriteAtomicAs(filepath.Join(dir, "x.json"), true, owner, func(w io.Writer) error {
			names := dirNames(t, dir)
			for _, n := range names {
				if n != "x.json" {
					seen = append(seen, n)
				}
			}
			_, err := io.WriteString(w, "{}")
			return err
		})
		if err != nil {
			t.Fatal(err)
		}
	}
	if len(seen) != 2 {
		t.Fatalf("temporary files seen while writing: %v; want one per write", seen)
	}
	wantOwners := []string{DefaultTempOwner(), "shard2of4-pid77"}
	for k, n := range seen {
		target, owner, ok := ParseTempName(n)
		if !ok || target != "x.json" || owner != wantOwners[k] {
			t.Errorf("ParseTempName(%q) = %q, %q, %v; want x.json, %q", n, target, owner, ok, wantOwners[k])
		}
	}
	cases := []struct {
		name, target, owner string
		ok                  bool
	}{
		{".x.labels.png.tmp-123", "x.labels.png", "", true},
		{".a.b.json.tmp-pid9-4294967295", "a.b.json", "pid9", true},
		{".a.json.tmp-shard0of2-pid1-5", "a.json", "shard0of2-pid1", true},
		{"x.labels.png.tmp-1", "", "", false},
		{".x.png.tmp-", "", "", false},
		{".x.png.tmp-pid1-", "", "", false},
		{".x.png.tmp-12a", "", "", false},
		{".x.png.tmp-p_1-12", "", "", false},
		{".hidden.png", "", "", false},
	}
	for _, c := range cases {
		target, owner, ok := ParseTempName(c.name)
		if ok != c.ok || target != c.target || owner != c.owner {
			t.Errorf("ParseTempName(%q) = %q, %q, %v; want %q, %q, %v", c.name, target, owner, ok, c.target, c.owner, c.ok)
		}
	}
	if err := WriteAtomicAs(filepath.Join(dir, "y"), true, "a/b", writeString("x")); err == nil {
		t.Error("an owner with a slash was accepted")
	}
	// A folder in the way is refused, with force too, and left as it is.
	folder := filepath.Join(dir, "z.json")
	os.Mkdir(folder, 0o755)
	if err := WriteAtomic(folder, true, writeString("x")); !errors.Is(err, ErrIsFolder) || !strings.Contains(err.Error(), folder) {
		t.Errorf("folder in the way: %v; want ErrIsFolder naming it", err)
	}
	if st, err := os.Stat(folder); err != nil || !st.IsDir() {
		t.Errorf("the folder was touched: %v", err)
	}
}
