// Command coinsrun builds the pixel graph of testdata/eigen/coins152x192.png
// (intensities / 255, radius 5, sigma_I 0.1, sigma_X 4), optionally writes
// it in Matrix Market format, and times segment/eigen.Smallest for the k
// smallest eigenpairs. It prints one JSON line: values, best and median
// wall seconds over the repeats, LOBPCG steps.
//
//	go run ./testdata/eigen/coinsrun -mtx /tmp/coins.mtx -k 6 -repeat 5
package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"image"
	"image/png"
	"os"
	"sort"
	"time"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/eigen"
)

func main() {
	img := flag.String("image", "testdata/eigen/coins152x192.png", "8-bit gray PNG")
	mtx := flag.String("mtx", "", "write the graph here (Matrix Market)")
	k := flag.Int("k", 6, "eigenpairs")
	repeat := flag.Int("repeat", 5, "timed solves")
	workers := flag.Int("workers", 0, "goroutines (0: all cores)")
	flag.Parse()
	if err := run(*img, *mtx, *k, *repeat, *workers); err != nil {
		fmt.Fprintln(os.Stderr, "coinsrun:", err)
		os.Exit(1)
	}
}

func run(path, mtx string, k, repeat, workers int) error {
	f, err := os.Open(path)
	if err != nil {
		return err
	}
	defer f.Close()
	im, err := png.Decode(f)
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	gray, ok := im.(*image.Gray)
	if !ok {
		return fmt.Errorf("%s: want 8-bit gray, got %T", path, im)
	}
	w, h := gray.Bounds().Dx(), gray.Bounds().Dy()
	plane := make([]float32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			plane[y*w+x] = float32(gray.Pix[y*gray.Stride+x]) / 255
		}
	}
	t0 := time.Now()
	g, err := affinity.PixelGraph([][]float32{plane}, w, h, affinity.PixelParams{Radius: 5, SigmaI: 0.1, SigmaX: 4}, workers)
	if err != nil {
		return err
	}
	build := time.Since(t0).Seconds()
	if mtx != "" {
		out, err := os.Create(mtx)
		if err != nil {
			return err
		}
		if err := g.WriteMatrixMarket(out, "coins152x192 pixel graph, r=5, sigma_I=0.1, sigma_X=4"); err != nil {
			out.Close()
			return err
		}
		if err := out.Close(); err != nil {
			return err
		}
	}
	var times []float64
	var res *eigen.Result
	for i := 0; i < max(repeat, 1); i++ {
		t := time.Now()
		res, err = eigen.Smallest(g, k, eigen.Options{Workers: workers})
		if err != nil {
			return err
		}
		times = append(times, time.Since(t).Seconds())
	}
	sort.Float64s(times)
	return json.NewEncoder(os.Stdout).Encode(map[string]any{
		"n": g.N, "nnz": g.NNZ(), "values": res.Values, "residuals": res.Residuals,
		"iterations": res.Iterations, "graph_seconds": build,
		"best_seconds": times[0], "median_seconds": times[len(times)/2],
	})
}
