package batch

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path"
	"path/filepath"
	"slices"
	"strings"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
)

// staleOutput is the record of an earlier run in the output folder whose
// input is not among this run's inputs (it left the selection: Include,
// Exclude, the truth-mask rule, or it was deleted), with the files it
// lists.
type staleOutput struct {
	Record string   // path of STEM.json
	Input  string   // the input the record names
	Files  []string // paths of the outputs it lists that exist, without the record
}

// staleOutputs walks out for cleave records (STEM.json files that are
// cleave's) whose stem is not one of inputs' stems. Hidden entries (the
// index, the lock, temporary files) are passed over; a JSON file that is
// not a cleave record is not cleave's and is left out. Output names a
// record lists are taken only as plain names in the record's folder.
func staleOutputs(out string, inputs []Input) ([]staleOutput, error) {
	current := make(map[string]bool, len(inputs))
	for _, in := range inputs {
		current[in.Stem] = true
	}
	var stale []staleOutput
	err := filepath.WalkDir(out, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			if p == out && errors.Is(err, fs.ErrNotExist) {
				return filepath.SkipAll
			}
			return err
		}
		name := d.Name()
		if p != out && strings.HasPrefix(name, ".") {
			if d.IsDir() {
				return filepath.SkipDir
			}
			return nil
		}
		if d.IsDir() || !d.Type().IsRegular() || !strings.HasSuffix(name, ".json") {
			return nil
		}
		rel, err := filepath.Rel(out, p)
		if err != nil {
			return err
		}
		stem := strings.TrimSuffix(filepath.ToSlash(rel), ".json")
		if current[stem] {
			return nil
		}
		rec, err := pipeline.ReadRecord(p)
		if err != nil {
			return nil // not cleave's
		}
		s := staleOutput{Record: p, Input: rec.Input.Path}
		for _, o := range rec.Outputs {
			if o != path.Base(o) || o == "." || o == ".." || o == name || strings.ContainsRune(o, filepath.Separator) {
				continue
			}
			q := filepath.Join(filepath.Dir(p), o)
			if st, err := os.Lstat(q); err == nil && st.Mode().IsRegular() {
				s.Files = append(s.Files, q)
			}
		}
		stale = append(stale, s)
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("cannot look for earlier outputs in %s: %v", out, pipeline.DescribeErr(err))
	}
	slices.SortFunc(stale, func(a, b staleOutput) int { return strings.Compare(a.Record, b.Record) })
	return stale, nil
}

// pruneStale removes the outputs of stale records, each record last, so
// that a run stopped half-way leaves the record listing what is left.
func pruneStale(stale []staleOutput) error {
	for _, s := range stale {
		for _, f := range s.Files {
			if err := os.Remove(f); err != nil && !errors.Is(err, fs.ErrNotExist) {
				return fmt.Errorf("cannot remove the earlier output %s: %v", f, pipeline.DescribeErr(err))
			}
		}
		if err := os.Remove(s.Record); err != nil && !errors.Is(err, fs.ErrNotExist) {
			return fmt.Errorf("cannot remove the earlier record %s: %v", s.Record, pipeline.DescribeErr(err))
		}
	}
	return nil
}

// reportStale lists on w the stale outputs (at most ten by name), saying
// whether they were removed, in the words of v.
func reportStale(w io.Writer, out string, stale []staleOutput, pruned bool, v pipeline.Voice) {
	if len(stale) == 0 {
		return
	}
	var names []string
	files := 0
	for k, s := range stale {
		files += len(s.Files) + 1
		if k < 10 {
			rel, _ := filepath.Rel(out, s.Record)
			names = append(names, strings.TrimSuffix(rel, ".json")+".*")
		}
	}
	more := ""
	if len(stale) > 10 {
		more = fmt.Sprintf(" and %d more", len(stale)-10)
	}
	if pruned {
		fmt.Fprintf(w, "cleave batch: %s\n", v.Msg(fmt.Sprintf("removed %s of %s no longer selected (`prune`): %s%s",
			pipeline.Plural(files, "earlier output"), pipeline.Plural(len(stale), "input"), strings.Join(names, ", "), more)))
		return
	}
	fmt.Fprintf(w, "cleave batch: %s\n", v.Msg(fmt.Sprintf("kept %s in %s of %s no longer selected (or gone): %s%s; `prune` removes them",
		pipeline.Plural(files, "earlier output"), out, pipeline.Plural(len(stale), "input"), strings.Join(names, ", "), more)))
}
