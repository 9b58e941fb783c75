package pipeline

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// CheckNotInputs refuses, before anything is written, an output path (or
// the SaveGraph path) of jobs that is one of their input images, whatever
// their Replace: cleave never replaces its own input. Paths are compared
// as files (os.SameFile), so links and other spellings of a path count.
// The SaveGraph path may not be one of the outputs either, nor an
// existing file other than a Matrix Market file.
func CheckNotInputs(jobs []Job) error {
	type input struct {
		path string
		info os.FileInfo
	}
	var inputs []input
	for _, j := range jobs {
		if st, err := os.Stat(j.Path); err == nil {
			inputs = append(inputs, input{j.Path, st})
		}
	}
	for _, j := range jobs {
		for _, out := range j.PossibleOutputs() {
			st, err := os.Stat(out)
			if err != nil {
				continue
			}
			for _, in := range inputs {
				if os.SameFile(st, in.info) {
					what := "output"
					if out == j.SaveGraph {
						what = "`save-graph` file"
					}
					return fmt.Errorf("the %s %s of %s is the input image %s; cleave never replaces an input, even with `force`: choose another `out` or file name", what, out, j.Path, in.path)
				}
			}
		}
		if j.SaveGraph != "" {
			if err := checkGraphTarget(j.SaveGraph); err != nil {
				return err
			}
			g, _ := filepath.Abs(j.SaveGraph)
			own := j
			own.SaveGraph = ""
			for _, out := range own.Outputs() {
				if o, _ := filepath.Abs(out); o == g {
					return fmt.Errorf("`save-graph` %s is also an output of %s; choose another file name", j.SaveGraph, j.Path)
				}
			}
		}
	}
	return nil
}

// checkGraphTarget refuses an existing SaveGraph path that is not a
// Matrix Market file (its first line starts "%%MatrixMarket"), whatever
// the Replace: cleave replaces only a graph file, such as one it wrote
// before, never an image or another file of the user's.
func checkGraphTarget(p string) error {
	st, err := os.Stat(p)
	if err != nil {
		return nil // nothing there yet (or the write will name the problem)
	}
	if !st.Mode().IsRegular() {
		return fmt.Errorf("`save-graph` %s exists and is not a regular file; choose another file name", p)
	}
	f, err := os.Open(p)
	if err != nil {
		return fmt.Errorf("`save-graph` %s: %v", p, err)
	}
	defer f.Close()
	head := make([]byte, len(matrixMarketBanner))
	if _, err := io.ReadFull(f, head); err != nil || string(head) != matrixMarketBanner {
		return fmt.Errorf("`save-graph` %s exists and is not a Matrix Market file; cleave replaces only a graph file, even with `force`: choose another file name", p)
	}
	return nil
}

// matrixMarketBanner starts every Matrix Market file.
const matrixMarketBanner = "%%MatrixMarket"
