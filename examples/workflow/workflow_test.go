// Package workflow_test runs the Snakefile beside it with Debian's
// snakemake, and the README's GNU parallel line with Debian's parallel,
// on generated nuclei scenes with their truth masks; each label map must
// be byte-identical to the one a plain 'cleave batch' run writes with the
// same parameters, and a second snakemake run must find nothing to do.
package workflow_test

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
	"github.com/cleave-seg/cleave/imageio/scenes"
)

// parallelLine is the README's GNU parallel equivalent of the Snakefile's
// segment rule, run here as it is written there.
const parallelLine = `find images -maxdepth 1 -name '*.png' ! -name '*.truth.png' | parallel -j 8 cleave segment --workers 1 --params best.json --out results {}`

type setup struct {
	dir, bin string // the working folder (images/, best.json) and cleave's folder
	stems    []string
	ref      string // outputs of the plain batch run
}

func prepare(t *testing.T) *setup {
	t.Helper()
	if _, err := exec.LookPath("go"); err != nil {
		t.Skip("no go command")
	}
	s := &setup{dir: t.TempDir(), bin: t.TempDir()}
	if out, err := exec.Command("go", "build", "-o", filepath.Join(s.bin, "cleave"), "../../cmd/cleave").CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	images := filepath.Join(s.dir, "images")
	os.MkdirAll(images, 0o755)
	for k := range 3 {
		sc := scenes.Nuclei(scenes.NucleiOptions{Width: 160, Height: 160, Seed: uint64(11020 + k)})
		stem := fmt.Sprintf("nuclei-%d", k)
		if err := scenes.WritePNG(filepath.Join(images, stem+".png"), sc.Image()); err != nil {
			t.Fatal(err)
		}
		if err := scenes.WritePNG(filepath.Join(images, stem+".truth.png"), sc.TruthImage()); err != nil {
			t.Fatal(err)
		}
		s.stems = append(s.stems, stem)
	}
	os.WriteFile(filepath.Join(s.dir, "best.json"), []byte(`{"superpixels": 150, "classes": 2, "background": "dark"}`), 0o644)
	s.ref = filepath.Join(t.TempDir(), "ref")
	if out, err := s.run(filepath.Join(s.bin, "cleave"), "batch", "-q", "--params", "best.json", "--out", s.ref, "images"); err != nil {
		t.Fatalf("plain batch run: %v\n%s", err, out)
	}
	return s
}

func (s *setup) run(name string, args ...string) ([]byte, error) {
	cmd := exec.Command(name, args...)
	cmd.Dir = s.dir
	cmd.Env = append(os.Environ(), "PATH="+s.bin+string(os.PathListSeparator)+os.Getenv("PATH"))
	return cmd.CombinedOutput()
}

// sameLabels compares every label map in out with the plain run's.
func (s *setup) sameLabels(t *testing.T, what, out string) {
	t.Helper()
	for _, stem := range s.stems {
		want, err := os.ReadFile(filepath.Join(s.ref, stem+".labels.png"))
		if err != nil {
			t.Fatal(err)
		}
		got, err := os.ReadFile(filepath.Join(out, stem+".labels.png"))
		if err != nil {
			t.Errorf("%s: %v", what, err)
		} else if !bytes.Equal(got, want) {
			t.Errorf("%s: %s.labels.png differs from the plain batch run's", what, stem)
		}
	}
}

func TestSnakefile(t *testing.T) {
	if testing.Short() {
		t.Skip("runs snakemake")
	}
	if _, err := exec.LookPath("snakemake"); err != nil {
		loudskip.Skip(t, "snakemake not found: the Snakefile example was NOT run (Debian: apt-get install --no-install-recommends snakemake)")
	}
	s := prepare(t)
	snakefile, _ := filepath.Abs("Snakefile")
	args := []string{"--cores", "2", "-s", snakefile, "--config", "images=images", "out=results", "flags=--params best.json"}
	out, err := s.run("snakemake", args...)
	if err != nil {
		t.Fatalf("snakemake: %v\n%s", err, out)
	}
	s.sameLabels(t, "snakemake", filepath.Join(s.dir, "results"))
	f, err := os.Open(filepath.Join(s.dir, "results", "scores.csv"))
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(f).ReadAll()
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	// Header, one row per image (in name order), the mean.
	if len(rows) != len(s.stems)+2 || rows[0][0] != "name" || rows[len(rows)-1][0] != "mean" {
		t.Fatalf("scores.csv: %q", rows)
	}
	for k, stem := range s.stems {
		if r := rows[k+1]; r[0] != stem || r[2] != "images/"+stem+".truth.png" {
			t.Errorf("scores.csv row %d: %q; want %s against images/%s.truth.png", k+1, r[:3], stem, stem)
		}
	}
	again, err := s.run("snakemake", args...)
	if err != nil || !strings.Contains(string(again), "Nothing to be done") {
		t.Errorf("second snakemake run: %v; want nothing to do:\n%s", err, again)
	}
}

func TestParallelLine(t *testing.T) {
	if testing.Short() {
		t.Skip("runs GNU parallel")
	}
	if _, err := exec.LookPath("parallel"); err != nil {
		loudskip.Skip(t, "GNU parallel not found: the README's parallel line was NOT run (Debian: apt-get install parallel)")
	}
	readme, err := os.ReadFile("../../README.md")
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(readme), parallelLine) {
		t.Fatalf("README.md lacks the line this test runs:\n%s", parallelLine)
	}
	s := prepare(t)
	if out, err := s.run("sh", "-c", parallelLine); err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	s.sameLabels(t, "parallel", filepath.Join(s.dir, "results"))
	if m, _ := filepath.Glob(filepath.Join(s.dir, "results", "*.truth.*")); len(m) > 0 {
		t.Errorf("truth masks were segmented: %v", m)
	}
}
