package tuning

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"time"

	"github.com/cleave-seg/cleave/cmd/cleave/internal/batch"
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment/score"
	"github.com/cleave-seg/cleave/segment/tune"
)

// Outputs returns the files Write puts into its folder, in the order
// written (tune.json last: it holds the seconds of the whole run); the
// slice is the caller's.
func Outputs() []string { return []string{"best.json", "tune.csv", "tune.png", "tune.json"} }

// Write creates dir when missing and writes best.json, tune.csv, tune.png
// and tune.json into it, each atomically (imageio.WriteAtomic, replacing
// an existing file only when force is set). tune.json's seconds are those
// since Config.Start.
func (o *Outcome) Write(dir string, force bool) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("cannot create the output folder: %w", err)
	}
	writes := []struct {
		name string
		fn   func(io.Writer) error
	}{
		{"best.json", func(w io.Writer) error { return writeJSON(w, o.ParamsFile()) }},
		{"tune.csv", o.writeCSV},
		{"tune.png", o.writeHeatmap},
	}
	for _, wr := range writes {
		if err := imageio.WriteAtomic(filepath.Join(dir, wr.name), force, wr.fn); err != nil {
			return err
		}
	}
	o.Report.Seconds = time.Since(o.cfg.Start).Seconds()
	return imageio.WriteAtomic(filepath.Join(dir, "tune.json"), force, func(w io.Writer) error { return writeJSON(w, o.Report) })
}

// Setting is the chosen value of parameter d, or auto when its axis
// leaves it to the image.
func (o *Outcome) Setting(d tune.Param) (v float64, auto bool) {
	if o.tuner.Space[d].Auto {
		return 0, true
	}
	if !o.kept {
		return o.best.Point[d], false
	}
	if vs := o.tuner.Space[d].Values; len(vs) == 1 {
		return vs[0], false
	}
	return o.cfg.givenValue(d)
}

// givenValue is parameter d as the automatic settings (Config.Base, what
// the baseline was scored with) hold it: auto, or its value.
func (c *Config) givenValue(d tune.Param) (v float64, auto bool) {
	b := c.Base
	switch d {
	case tune.SigmaI:
		return b.SigmaI, b.AutoSigmaI
	case tune.SigmaX:
		return b.SigmaX, b.AutoSigmaX
	case tune.MaxNcut:
		return b.MaxNcut, false
	case tune.Radius:
		return float64(b.Radius), false
	case tune.Superpixels:
		return float64(b.Superpixels), b.Superpixels < 0
	case tune.Compactness:
		return b.Compactness, false
	case tune.Necks:
		if b.SeamsOnly {
			return tune.Off, false
		}
		return tune.On, false
	case tune.Faint:
		return float64(b.Faint), false
	}
	panic("tuning: no automatic value for " + d.String())
}

// settingText is the chosen value of d as tune.json and the summary print
// it.
func (o *Outcome) settingText(d tune.Param) string {
	v, auto := o.Setting(d)
	switch {
	case auto:
		return "auto"
	case d.Switch():
		return tune.OnOff(v)
	}
	return tune.FormatValue(v)
}

// ParamsFile is best.json: every parameter of Config.Fixed with the tuned
// values, numbers where the value is one, "auto" for an automatic axis,
// "on" or "off" for a switch (as a params file gives necks).
func (o *Outcome) ParamsFile() map[string]any {
	m := make(map[string]any, len(o.cfg.Fixed)+int(tune.NumParams))
	for k, v := range o.cfg.Fixed {
		m[k] = v
	}
	for _, d := range tune.Params() {
		v, auto := o.Setting(d)
		switch {
		case auto:
			m[d.String()] = "auto"
		case d.Switch():
			m[d.String()] = tune.OnOff(v)
		case d.Integer():
			m[d.String()] = int64(v)
		default:
			m[d.String()] = v
		}
	}
	return m
}

func writeJSON(w io.Writer, v any) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(v)
}

// csvMeans are the metrics whose mean over the images tune.csv lists:
// the objectives (score.Metric.Objective) in the order of the Report's
// fields.
func csvMeans() []score.Metric {
	return slices.DeleteFunc(score.Metrics(), func(m score.Metric) bool { return !m.Objective() })
}

// writeCSV writes tune.csv: every evaluation in the order evaluated, its
// stage, the reported parameters, the tuned metric per image, the means,
// the seconds (with the shared work), for settings timed the median
// seconds per image, and the mean cost per image (tune.Cost) that breaks
// ties. The baseline row shows the fixed settings as given
// (Config.Given).
func (o *Outcome) writeCSV(w io.Writer) error {
	t := o.tuner
	cw := csv.NewWriter(w)
	all := t.All()
	params := Reported(&t.Space)
	head := []string{"stage"}
	for _, d := range params {
		head = append(head, d.String())
	}
	for _, n := range t.Names {
		head = append(head, t.Metric.String()+":"+n)
	}
	means := csvMeans()
	for _, m := range means {
		head = append(head, "mean_"+m.String())
	}
	head = append(head, "seconds", "seconds_per_image", "cost_per_image", "error")
	if err := cw.Write(head); err != nil {
		return err
	}
	for _, e := range t.Order {
		row := []string{e.Stage}
		for _, d := range params {
			if e == o.baseline {
				row = append(row, o.cfg.Given[d])
			} else {
				row = append(row, t.Space.Text(e.Point, d))
			}
		}
		errText := ""
		for j := range all {
			if e.Errs[j] != "" {
				row = append(row, "")
				if errText == "" {
					errText = batch.CSVText(t.Names[j] + ": " + e.Errs[j])
				}
			} else {
				row = append(row, strconv.FormatFloat(e.Reports[j].Get(t.Metric), 'g', 10, 64))
			}
		}
		for _, m := range means {
			var sum float64
			for j := range all {
				sum += e.Reports[j].Get(m)
			}
			if errText != "" {
				row = append(row, "")
			} else {
				row = append(row, strconv.FormatFloat(sum/float64(len(all)), 'g', 10, 64))
			}
		}
		per := ""
		if v := t.SecondsPerImage(e, all); !math.IsNaN(v) {
			per = strconv.FormatFloat(v, 'f', 3, 64)
		}
		cost := ""
		if c := t.CostPerImage(e, all); !math.IsNaN(c) {
			cost = strconv.FormatFloat(c, 'f', 0, 64)
		}
		row = append(row, strconv.FormatFloat(e.Seconds, 'f', 3, 64), per, cost, errText)
		if err := cw.Write(row); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
