// Command evaluate measures cleave on the project's generated scenes the
// way a user would: it writes scenes (examples/scenes) to a temporary
// folder, runs the real `cleave segment` binary on them with the flags
// given after "--", and scores the label maps against the exact instance
// masks with the adjusted Rand index (Hubert and Arabie 1985) and the
// object F1 at IoU > 0.5 (common practice in cell-segmentation
// benchmarks), beside Otsu's threshold plus connected components (Otsu
// 1979) scored the same way.
//
//	go run ./examples/evaluate -kind nuclei -n 6 -seed 301 -- --classes 2 --background dark
//	go run ./examples/evaluate -kind plates -n 6 -seed 201 -- --classes 2 --background bright --flatten 30
package main

import (
	"flag"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"time"

	"github.com/cleave-seg/cleave/examples/scenes"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment/score"
)

func main() {
	kind := flag.String("kind", "nuclei", "scene family: nuclei or plates")
	n := flag.Int("n", 6, "number of scenes")
	seed := flag.Uint64("seed", 301, "seed of the first scene; scene k uses seed+k")
	size := flag.Int("size", 512, "width and height in pixels")
	keep := flag.String("keep", "", "keep the scenes and outputs in this folder instead of a temporary one")
	flag.Parse()
	if err := run(*kind, *n, *seed, *size, *keep, flag.Args()); err != nil {
		fmt.Fprintln(os.Stderr, "evaluate:", err)
		os.Exit(1)
	}
}

func run(kind string, n int, seed uint64, size int, keep string, extra []string) error {
	if kind != "nuclei" && kind != "plates" {
		return fmt.Errorf("-kind must be nuclei or plates, got %q", kind)
	}
	dir := keep
	if dir == "" {
		d, err := os.MkdirTemp("", "cleave-evaluate-")
		if err != nil {
			return err
		}
		defer os.RemoveAll(d)
		dir = d
	} else if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	bin := filepath.Join(dir, "cleave")
	if out, err := exec.Command("go", "build", "-o", bin, "./cmd/cleave").CombinedOutput(); err != nil {
		return fmt.Errorf("building cleave (run from the module root): %v\n%s", err, out)
	}
	var list []*scenes.Scene
	var paths []string
	for k := 0; k < n; k++ {
		var s *scenes.Scene
		if kind == "nuclei" {
			s = scenes.Nuclei(scenes.NucleiOptions{Width: size, Height: size, Seed: seed + uint64(k)})
		} else {
			s = scenes.Plate(scenes.PlateOptions{Width: size, Height: size, Seed: seed + uint64(k)})
		}
		p := filepath.Join(dir, s.Name+".png")
		if err := scenes.WritePNG(p, s.Image()); err != nil {
			return err
		}
		list, paths = append(list, s), append(paths, p)
	}
	out := filepath.Join(dir, "out")
	args := append(append([]string{"segment", "--force", "--out", out}, extra...), paths...)
	t0 := time.Now()
	cmd := exec.Command(bin, args...)
	cmd.Stderr = os.Stderr
	if err := cmd.Run(); err != nil {
		return fmt.Errorf("cleave %v: %v", args, err)
	}
	wall := time.Since(t0).Seconds()
	fmt.Printf("%-14s %8s %8s %8s %8s\n", "scene", "ARI", "F1", "Otsu ARI", "Otsu F1")
	var sa, sf, oa, of float64
	for _, s := range list {
		labels, _, _, err := imageio.ReadLabels(filepath.Join(out, s.Name+".labels.png"))
		if err != nil {
			return err
		}
		ot := scenes.OtsuObjects(s, kind == "plates")
		a, f := score.ARI(labels, s.Truth), score.MatchObjects(labels, s.Truth).F1
		b, g := score.ARI(ot, s.Truth), score.MatchObjects(ot, s.Truth).F1
		sa, sf, oa, of = sa+a, sf+f, oa+b, of+g
		fmt.Printf("%-14s %8.3f %8.3f %8.3f %8.3f\n", s.Name, a, f, b, g)
	}
	m := float64(n)
	fmt.Printf("%-14s %8.3f %8.3f %8.3f %8.3f\n", "mean", sa/m, sf/m, oa/m, of/m)
	fmt.Printf("cleave segment on %d images: %.2f s wall\n", n, wall)
	return nil
}
