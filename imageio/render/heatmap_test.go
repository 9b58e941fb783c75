package render

import (
	"bytes"
	"encoding/json"
	"errors"
	"image/color"
	"math"
	"os"
	"os/exec"
	"strings"
	"testing"

	"github.com/cleave-seg/cleave/examples/loudskip"
)

// debianPython is the interpreter with Debian's python3-matplotlib and
// python3-skimage (the python3 on PATH may lack them).
const debianPython = "/usr/bin/python3"

// referenceScript prints matplotlib's cividis at some points and
// scikit-image's lab2rgb of the palette's L*a*b* colours.
const referenceScript = `
import json, sys
import numpy as np
from matplotlib import cm
from skimage.color import lab2rgb
fs = [i / 20 for i in range(21)]
civ = [list(cm.cividis(f)[:3]) for f in fs]
lab = json.loads(sys.argv[1])
rgb = lab2rgb(np.array([lab], float))[0].tolist()
json.dump({"f": fs, "cividis": civ, "rgb": rgb}, sys.stdout)
`

// TestAgainstReferences: Cividis against matplotlib's cividis colour map
// (Debian python3-matplotlib; it looks the value up in the same 256-entry
// table without interpolation, so a step of the table, 2/255, is
// allowed), and the palette's L*a*b* to sRGB conversion against
// scikit-image's color.lab2rgb (D65; Debian python3-skimage), to one
// 8-bit step, for colours inside the gamut.
func TestAgainstReferences(t *testing.T) {
	var labs [][3]float64
	for _, L := range []float64{30, 58, 78} {
		for h := 0.0; h < 2*math.Pi; h += math.Pi / 6 {
			labs = append(labs, [3]float64{L, 30 * math.Cos(h), 30 * math.Sin(h)})
		}
	}
	arg, _ := json.Marshal(labs)
	cmd := exec.Command(debianPython, "-c", referenceScript, string(arg))
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		if strings.Contains(stderr.String(), "ModuleNotFoundError") || errors.Is(err, exec.ErrNotFound) || errors.Is(err, os.ErrNotExist) {
			loudskip.Skip(t, "install Debian's python3-matplotlib and python3-skimage to run this cross-check (%v: %s)", err, stderr.String())
		}
		t.Fatalf("%v: %s", err, stderr.String())
	}
	var ref struct {
		F       []float64    `json:"f"`
		Cividis [][3]float64 `json:"cividis"`
		RGB     [][3]float64 `json:"rgb"`
	}
	if err := json.Unmarshal(out, &ref); err != nil {
		t.Fatal(err)
	}
	for i, f := range ref.F {
		c := Cividis(f)
		got := [3]uint8{c.R, c.G, c.B}
		for k := range 3 {
			if math.Abs(float64(got[k])-255*ref.Cividis[i][k]) > 2 {
				t.Errorf("Cividis(%g) = %v; matplotlib %v", f, got, ref.Cividis[i])
				break
			}
		}
	}
	if len(ref.RGB) != len(labs) {
		t.Fatalf("%d colours back for %d", len(ref.RGB), len(labs))
	}
	for i, lab := range labs {
		got := labToSRGB(lab[0], lab[1], lab[2])
		in := true
		for k := range 3 {
			in = in && ref.RGB[i][k] > 0.001 && ref.RGB[i][k] < 0.999
		}
		if !in {
			continue
		}
		for k := range 3 {
			if math.Abs(float64(got[k])-255*ref.RGB[i][k]) > 1 {
				t.Errorf("Lab %v: %v; scikit-image %v", lab, got, ref.RGB[i])
				break
			}
		}
	}
}

// TestHeatmapCells: a cell's centre has the colour of its value on the
// stated range (Cividis((v - lo) / (hi - lo))), values outside the range
// take the end colours, a failed cell is gray, the best cell carries the
// white ring, and the gutters between tiles are paper.
func TestHeatmapCells(t *testing.T) {
	h := Heatmap{
		Values:   [][]float64{{0.2, 0.5, math.NaN()}, {0.9, -0.3, 1.4}},
		ColTicks: []string{"a", "b", "c"}, RowTicks: []string{"1", "2"},
		Lo: 0, Hi: 1, Best: [][2]int{{0, 1}},
	}
	img := h.Draw()
	if b := img.Bounds(); b.Dx() != HeatmapWidth || b.Dy() != HeatmapHeight {
		t.Fatalf("size %v", b)
	}
	areaW, areaH := HeatmapWidth-hmLeft-hmRight, hmGridBottom-hmTop
	cw, ch := areaW/3, areaH/2
	centre := func(c, r int) (int, int) { return hmLeft + c*cw + cw/2, hmTop + (1-r)*ch + ch/2 }
	for r, row := range h.Values {
		for c, v := range row {
			x, y := centre(c, r)
			got := img.RGBAAt(x+cw/2-6, y+ch/2-6) // near a corner, away from ring and ticks
			switch {
			case math.IsNaN(v):
				if got.R != got.G || got.R < 100 {
					t.Errorf("failed cell (%d, %d): %v; want gray", c, r, got)
				}
			default:
				if want := Cividis(v); got != want {
					t.Errorf("cell (%d, %d) value %g: %v; want %v", c, r, v, got, want)
				}
			}
		}
	}
	if Cividis(-0.3) != Cividis(0) || Cividis(1.4) != Cividis(1) {
		t.Error("values outside the range do not take the end colours")
	}
	x, y := centre(0, 1)
	rad := max(5, min(cw-hmGap, ch-hmGap)/5)
	if got := img.RGBAAt(x+rad, y); got != (color.RGBA{255, 255, 255, 255}) {
		t.Errorf("best cell ring at (%d, %d): %v; want white", x+rad, y, got)
	}
	if got := img.RGBAAt(hmLeft+cw, hmTop+ch/3); got != paper {
		t.Errorf("gutter %v; want paper %v", got, paper)
	}
}
