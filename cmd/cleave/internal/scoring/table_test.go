package scoring

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/pipeline"
)

// voice marks where the command's wording applies.
var voice = pipeline.Voice{Message: func(s string) string { return strings.ReplaceAll(s, "`", "'") }}

// The text table of folders has a row per pair and the mean, each
// measure with 4 decimals, and names binary masks; that of one pair says
// how each map was read. A mask of 0 and 255 relabelled identically
// scores ARI 1 (Hubert and Arabie 1985: identical partitions).
func TestWriteTable(t *testing.T) {
	dir := t.TempDir()
	truth, mask := filepath.Join(dir, "t.png"), filepath.Join(dir, "m.png")
	writeLabels(t, truth, [][]uint16{{1, 1, 0}, {1, 0, 0}, {0, 0, 2}, {0, 2, 2}})
	writeLabels(t, mask, [][]uint16{{255, 255, 0}, {255, 0, 0}, {0, 0, 255}, {0, 255, 255}})
	r, err := Score(context.Background(), []Pair{{Name: "m", Image: mask, Truth: truth}}, 1, true)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	WriteTable(&buf, r, true, 1, voice)
	lines := strings.Split(buf.String(), "\n")
	if !strings.HasPrefix(strings.TrimSpace(lines[0]), "name") || !strings.Contains(lines[1], "1.0000") || !strings.Contains(lines[2], "mean of 1") ||
		!strings.Contains(buf.String(), "binary masks: m prediction: binary mask, 2 objects") || !strings.Contains(buf.String(), "every metric in 'json' and 'csv'") {
		t.Errorf("folders:\n%s", buf.String())
	}
	buf.Reset()
	WriteTable(&buf, r, false, 1, voice)
	if !strings.Contains(buf.String(), "prediction: a binary mask (0 and one other value): its 2 objects") || !strings.Contains(buf.String(), "truth:      a label map of 2 objects") {
		t.Errorf("one pair:\n%s", buf.String())
	}
}

// PairArgs: two files are one pair, two folders pair by name, a file and
// a folder are a RequestError, unpaired files fail unless pairedOnly, and
// then they are named on the log.
func TestPairArgs(t *testing.T) {
	pred, truth := t.TempDir(), t.TempDir()
	touch(t, pred, "a.labels.png", "b.labels.png")
	touch(t, truth, "a.truth.png")
	var log bytes.Buffer
	if p, folders, err := PairArgs(filepath.Join(pred, "a.labels.png"), filepath.Join(truth, "a.truth.png"), false, &log, voice); err != nil || folders || len(p) != 1 || p[0].Name != "a.labels" {
		t.Errorf("files: %+v, %v, %v", p, folders, err)
	}
	var re *pipeline.RequestError
	if _, _, err := PairArgs(pred, filepath.Join(truth, "a.truth.png"), false, &log, voice); !errors.As(err, &re) {
		t.Errorf("folder and file: %v", err)
	}
	if _, _, err := PairArgs(pred, truth, false, &log, voice); err == nil || !strings.Contains(err.Error(), "b.labels.png") || !strings.Contains(err.Error(), "'paired-only'") {
		t.Errorf("unpaired: %v", err)
	}
	p, folders, err := PairArgs(pred, truth, true, &log, voice)
	if err != nil || !folders || len(p) != 1 || !strings.Contains(log.String(), "cleave score: not scored: "+filepath.Join(pred, "b.labels.png")+" has no truth") {
		t.Errorf("paired only: %+v, %v, %q", p, err, log.String())
	}
	if _, _, err := PairArgs(filepath.Join(pred, "missing.png"), truth, false, &log, voice); err == nil || !errors.Is(err, os.ErrNotExist) || !strings.HasPrefix(err.Error(), "prediction: ") {
		t.Errorf("missing: %v", err)
	}
}
