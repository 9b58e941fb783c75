// Command gen writes synthetic example scenes with their truth masks.
// KIND is one of nuclei, plates, clusters, haze, stained, surface, grains.
//
//	go run ./examples/scenes/gen -out DIR -kind KIND -n N -seed S -size 512 [-tiff]
//
// For each of N scenes (seeds S, S+1, ..., S+N-1) it writes NAME.png (or
// NAME.tif with -tiff), the gray image, and NAME.truth.png, a 16-bit
// instance mask whose value is the object label (0 background). NAME is the
// scene's name, for example nuclei-7. Files are written atomically.
package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/cleave-seg/cleave/imageio/scenes"
)

func main() {
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

// errUsage marks a wrong invocation (exit status 2).
var errUsage = errors.New("usage")

func run(args []string, stdout, stderr io.Writer) int {
	err := generate(args, stdout, stderr)
	switch {
	case err == nil:
		return 0
	case errors.Is(err, flag.ErrHelp):
		return 0
	case errors.Is(err, errUsage):
		fmt.Fprintf(stderr, "gen: %v\n", err)
		return 2
	default:
		fmt.Fprintf(stderr, "gen: %v\n", err)
		return 1
	}
}

func generate(args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("gen", flag.ContinueOnError)
	fs.SetOutput(stderr)
	out := fs.String("out", "", "output directory (created if missing)")
	kind := fs.String("kind", "nuclei", "scene family: "+strings.Join(scenes.Kinds(), ", "))
	n := fs.Int("n", 1, "number of scenes")
	seed := fs.Uint64("seed", 1, "seed of the first scene; scene k uses seed+k")
	size := fs.Int("size", 512, "width and height in pixels")
	depth := fs.Int("depth", 16, "bit depth of the image: 8 or 16")
	asTIFF := fs.Bool("tiff", false, "write the image as uncompressed TIFF instead of PNG")
	fs.Usage = func() {
		fmt.Fprintf(stderr, "gen writes invented synthetic scenes and their 16-bit truth masks.\n\n")
		fmt.Fprintf(stderr, "usage: gen -out DIR -kind KIND -n N -seed S -size 512 [-tiff]\n\nkinds: %s\n\n", strings.Join(scenes.Kinds(), ", "))
		fs.PrintDefaults()
		fmt.Fprintf(stderr, "\nexample:\n  go run ./examples/scenes/gen -out /tmp/nuclei -kind nuclei -n 3 -seed 1\n")
	}
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return err
		}
		return fmt.Errorf("%w: %v", errUsage, err)
	}
	if fs.NArg() > 0 {
		return fmt.Errorf("%w: unexpected argument %q", errUsage, fs.Arg(0))
	}
	if *out == "" {
		return fmt.Errorf("%w: -out is required", errUsage)
	}
	if *n < 1 || *n > 10000 {
		return fmt.Errorf("%w: -n %d outside [1, 10000]", errUsage, *n)
	}
	known := false
	for _, k := range scenes.Kinds() {
		known = known || k == *kind
	}
	if !known {
		return fmt.Errorf("%w: -kind %q is not one of %s", errUsage, *kind, strings.Join(scenes.Kinds(), ", "))
	}
	make1 := func(s uint64) (*scenes.Scene, error) {
		sc, err := scenes.Generate(*kind, *size, *size, s, *depth)
		if err != nil {
			return nil, fmt.Errorf("%w: %v", errUsage, err)
		}
		return sc, nil
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		return err
	}
	for k := 0; k < *n; k++ {
		sc, err := make1(*seed + uint64(k))
		if err != nil {
			return err
		}
		img := filepath.Join(*out, sc.Name+".png")
		write := scenes.WritePNG
		if *asTIFF {
			img = filepath.Join(*out, sc.Name+".tif")
			write = scenes.WriteTIFF
		}
		if err := write(img, sc.Image()); err != nil {
			return err
		}
		truth := filepath.Join(*out, sc.Name+".truth.png")
		if err := scenes.WritePNG(truth, sc.TruthImage()); err != nil {
			return err
		}
		fmt.Fprintf(stdout, "%s\t%s\t%d objects\n", img, truth, sc.Objects)
	}
	return nil
}
