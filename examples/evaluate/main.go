// Command evaluate measures cleave on the project's generated scenes the
// way a user would: it writes scenes (package imageio/scenes) to a temporary
// folder, runs the real `cleave segment` binary on them with the flags of
// the kind (the table recommended below, or the flags given after "--"),
// runs the classical baseline watershed.py (threshold + distance-transform
// watershed with scikit-image, parameters chosen per kind on seeds
// 9000-9004) on the same files, and scores every label map against the
// exact instance masks beside Otsu's threshold plus connected components
// (Otsu 1979):
//
//   - object F1 at IoU > 0.5 (score.MatchObjects; common practice in
//     cell-segmentation benchmarks),
//
//   - mean average precision over IoU 0.50:0.95 (score.MeanAP; Caicedo et
//     al. 2019),
//
//   - the adjusted Rand index (score.ARI; Hubert and Arabie 1985),
//
//   - the relative count error |N_pred - N_true| / N_true.
//
//     go run ./examples/evaluate -kind all -n 4 -seed 9100
//     go run ./examples/evaluate -kind clusters -variant jpeg -quality 75 -json clusters.json
//     go run ./examples/evaluate -kind nuclei -n 10 -seed 401 -- --classes 2 --background dark
//
// Seeds 9000-9004 choose the baseline's parameters; report on others
// (default 9100).
package main

import (
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"image"
	"image/jpeg"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"time"

	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/imageio/scenes"
	"github.com/cleave-seg/cleave/segment/score"
)

// cleaveFlags is the one table of `cleave segment` flags recommended per
// kind. Engine work changes it here.
var cleaveFlags = map[string][]string{
	"nuclei":   {"--classes", "2", "--background", "dark"},
	"plates":   {"--classes", "2", "--background", "bright", "--flatten", "30"},
	"clusters": {"--classes", "2", "--background", "dark", "--faint", "4"}, // the README's row for dim nuclei among bright ones
	"haze":     {"--classes", "2", "--background", "dark", "--flatten-radii", "3", "--flatten-mode", "subtract"},
	"stained":  {"--classes", "2", "--background", "bright"},
	"surface":  {"--classes", "2", "--background", "bright", "--flatten", "30", "--grain", "on"},
	"grains":   {"--background", "lines"},
}

// metrics are the four scores of one label map (or their means).
type metrics struct {
	F1       float64 `json:"f1"`
	MAP      float64 `json:"map"`
	ARI      float64 `json:"ari"`
	CountErr float64 `json:"count_error"`
}

func (m *metrics) add(o metrics, w float64) {
	m.F1 += w * o.F1
	m.MAP += w * o.MAP
	m.ARI += w * o.ARI
	m.CountErr += w * o.CountErr
}

func measure(pred, truth []int32) metrics {
	t := score.Contingency(pred, truth)
	n := 0
	for _, l := range t.A {
		if l != 0 {
			n++
		}
	}
	nt := 0
	for _, l := range t.B {
		if l != 0 {
			nt++
		}
	}
	ce := math.NaN()
	if nt > 0 {
		ce = math.Abs(float64(n-nt)) / float64(nt)
	}
	return metrics{F1: score.MatchObjects(pred, truth).F1, MAP: t.MeanAP(), ARI: t.ARI(), CountErr: ce}
}

// measureFile scores the label map in path against truth.
func measureFile(path string, truth []int32) (metrics, error) {
	lm, err := imageio.ReadLabels(path)
	if err != nil {
		return metrics{}, err
	}
	labels := lm.Pix
	return measure(labels, truth), nil
}

// cols are the four scores as a table's columns.
func (m metrics) cols() string {
	return fmt.Sprintf("%6.3f %6.3f %6.3f %6.3f", m.F1, m.MAP, m.ARI, m.CountErr)
}

// kindResult is what -json writes per kind: means over the scenes.
type kindResult struct {
	Scenes          int      `json:"scenes"`
	CleaveFlags     []string `json:"cleave_flags"`
	Cleave          metrics  `json:"cleave"`
	Watershed       *metrics `json:"watershed"` // nil when the baseline was skipped
	Otsu            metrics  `json:"otsu"`
	CleaveSecPerImg float64  `json:"cleave_seconds_per_image"`
	// Tuned holds the scores of `cleave segment --params best.json` after
	// `cleave tune` on the -tune scenes ahead of the reported ones; nil
	// without -tune.
	Tuned            *metrics `json:"tuned,omitempty"`
	TunedSecPerImg   float64  `json:"tuned_seconds_per_image,omitempty"`
	TunedSetting     string   `json:"tuned_setting,omitempty"`
	WatershedSkipped string   `json:"watershed_skipped,omitempty"`
}

type config struct {
	kinds           []string
	n               int
	seed            uint64
	size            int
	variant         string
	quality         int
	tune            int
	metric          string
	keep, json, py  string
	extra           []string
	bin, dir, wsDir string
}

func main() {
	kind := flag.String("kind", "nuclei", "scene family: "+strings.Join(scenes.Kinds(), ", ")+", or all")
	n := flag.Int("n", 6, "number of scenes per kind")
	seed := flag.Uint64("seed", 9100, "seed of the first scene; scene k uses seed+k (9000-9004 chose the baseline's parameters: do not report on them)")
	size := flag.Int("size", 512, "width and height in pixels")
	variant := flag.String("variant", "16bit", "image files: 16bit (PNG), 8bit (PNG) or jpeg (8-bit JPEG at -quality)")
	quality := flag.Int("quality", 85, "JPEG quality 1-100 for -variant jpeg")
	keep := flag.String("keep", "", "keep the scenes and outputs in this folder instead of a temporary one")
	jsonOut := flag.String("json", "", "also write the per-kind means to this JSON file")
	py := flag.String("python", "/usr/bin/python3", "Python with scikit-image for the watershed baseline")
	tuneN := flag.Int("tune", 0, "also run `cleave tune` on this many further scenes per kind (seeds just below -seed) and score its best.json on the reported scenes")
	metric := flag.String("metric", "f1", "cleave tune's --metric with -tune")
	flag.Parse()
	c := config{n: *n, seed: *seed, size: *size, variant: *variant, quality: *quality, keep: *keep, json: *jsonOut, py: *py, extra: flag.Args(), tune: *tuneN, metric: *metric}
	if *kind == "all" {
		c.kinds = scenes.Kinds()
	} else {
		c.kinds = []string{*kind}
	}
	if err := run(&c); err != nil {
		fmt.Fprintln(os.Stderr, "evaluate:", err)
		os.Exit(1)
	}
}

func run(c *config) error {
	for _, k := range c.kinds {
		if _, ok := cleaveFlags[k]; !ok {
			return fmt.Errorf("-kind %q is not one of %s or all", k, strings.Join(scenes.Kinds(), ", "))
		}
	}
	switch c.variant {
	case "16bit", "8bit", "jpeg":
	default:
		return fmt.Errorf("-variant %q is not 16bit, 8bit or jpeg", c.variant)
	}
	if c.quality < 1 || c.quality > 100 {
		return fmt.Errorf("-quality %d outside 1-100", c.quality)
	}
	if c.n < 1 {
		return fmt.Errorf("-n %d below 1", c.n)
	}
	if c.tune < 0 || uint64(c.tune) > c.seed {
		return fmt.Errorf("-tune %d: needs 0 or more scenes, with seeds from -seed minus it", c.tune)
	}
	if len(c.extra) > 0 && len(c.kinds) > 1 {
		return errors.New("flags after -- replace one kind's table entry; give a single -kind with them")
	}
	c.dir = c.keep
	if c.dir == "" {
		d, err := os.MkdirTemp("", "cleave-evaluate-")
		if err != nil {
			return err
		}
		defer os.RemoveAll(d)
		c.dir = d
	} else if err := os.MkdirAll(c.dir, 0o755); err != nil {
		return err
	}
	c.bin = filepath.Join(c.dir, "cleave")
	if out, err := exec.Command("go", "build", "-o", c.bin, "./cmd/cleave").CombinedOutput(); err != nil {
		return fmt.Errorf("building cleave (run from the module root): %v\n%s", err, out)
	}
	c.wsDir = "examples/evaluate"
	results := make(map[string]kindResult)
	for _, k := range c.kinds {
		r, err := runKind(c, k)
		if err != nil {
			return err
		}
		results[k] = r
	}
	printSummary(c, results)
	if c.json != "" {
		doc := map[string]any{
			"variant": c.variant, "seed": c.seed, "n": c.n, "size": c.size, "kinds": results,
		}
		if c.variant == "jpeg" {
			doc["quality"] = c.quality
		}
		b, err := json.MarshalIndent(doc, "", " ")
		if err != nil {
			return err
		}
		if err := os.WriteFile(c.json, append(b, '\n'), 0o644); err != nil {
			return err
		}
	}
	return nil
}

func runKind(c *config, kind string) (kindResult, error) {
	res := kindResult{Scenes: c.n, CleaveFlags: cleaveFlags[kind]}
	if len(c.extra) > 0 {
		res.CleaveFlags = c.extra
	}
	dir := filepath.Join(c.dir, kind)
	in := filepath.Join(dir, "in")
	if err := os.MkdirAll(in, 0o755); err != nil {
		return res, err
	}
	list, paths, err := writeScenes(c, kind, in, c.seed, c.n, false)
	if err != nil {
		return res, err
	}

	out := filepath.Join(dir, "cleave")
	args := append(append([]string{"segment", "--force", "--out", out}, res.CleaveFlags...), paths...)
	t0 := time.Now()
	cmd := exec.Command(c.bin, args...)
	cmd.Stderr = os.Stderr
	if err := cmd.Run(); err != nil {
		return res, fmt.Errorf("cleave %v: %v", args, err)
	}
	res.CleaveSecPerImg = time.Since(t0).Seconds() / float64(c.n)

	tunedOut := filepath.Join(dir, "tuned-labels")
	if c.tune > 0 {
		if err := tuneKind(c, kind, dir, &res, paths, tunedOut); err != nil {
			return res, err
		}
	}

	wsOut := filepath.Join(dir, "watershed")
	ws := exec.Command(c.py, filepath.Join(c.wsDir, "watershed.py"), "--kind", kind, "--in", in, "--out", wsOut)
	ws.Stderr = os.Stderr
	wsOK := true
	if err := ws.Run(); err != nil {
		wsOK = false
		res.WatershedSkipped = err.Error()
		hint := "see watershed.py's message above"
		var ee *exec.ExitError
		if errors.As(err, &ee) && ee.ExitCode() == 3 {
			hint = "Debian's python3-skimage is missing: apt-get install -y python3-skimage"
		}
		fmt.Fprintf(os.Stderr, "\n*** evaluate: WATERSHED BASELINE SKIPPED for %s: %v (%s)\n\n", kind, err, hint)
	}

	fmt.Printf("\n%s (%s, seeds %d-%d, %dx%d)\n", kind, c.variant, c.seed, c.seed+uint64(c.n)-1, c.size, c.size)
	fmt.Printf("%-16s %5s | %6s %6s %6s %6s | %6s %6s %6s %6s | %6s %6s %6s %6s\n", "scene", "N",
		"cl F1", "mAP", "ARI", "cnt", "ws F1", "mAP", "ARI", "cnt", "ot F1", "mAP", "ARI", "cnt")
	var wsMean, tunedMean metrics
	w := 1 / float64(c.n)
	for _, s := range list {
		cl, err := measureFile(filepath.Join(out, s.Name+".labels.png"), s.Truth)
		if err != nil {
			return res, err
		}
		ot := measure(scenes.OtsuObjects(s, scenes.DarkObjects(kind)), s.Truth)
		res.Cleave.add(cl, w)
		res.Otsu.add(ot, w)
		wsCol := "     -      -      -      -"
		if wsOK {
			m, err := measureFile(filepath.Join(wsOut, s.Name+".labels.png"), s.Truth)
			if err != nil {
				return res, err
			}
			wsMean.add(m, w)
			wsCol = m.cols()
		}
		tunedCol := ""
		if c.tune > 0 {
			m, err := measureFile(filepath.Join(tunedOut, s.Name+".labels.png"), s.Truth)
			if err != nil {
				return res, err
			}
			tunedMean.add(m, w)
			tunedCol = " | tuned " + m.cols()
		}
		fmt.Printf("%-16s %5d | %s | %s | %s%s\n", s.Name, s.Objects, cl.cols(), wsCol, ot.cols(), tunedCol)
	}
	if wsOK {
		res.Watershed = &wsMean
	}
	if c.tune > 0 {
		res.Tuned = &tunedMean
	}
	return res, nil
}

// writeScenes generates n scenes of the kind from seed on into dir, as the
// -variant says, with their truth masks beside them (NAME.truth.png) when
// withTruth is set, and returns the scenes as the programs see them.
func writeScenes(c *config, kind, dir string, seed uint64, n int, withTruth bool) ([]*scenes.Scene, []string, error) {
	depth := 16
	if c.variant != "16bit" {
		depth = 8
	}
	var list []*scenes.Scene
	var paths []string
	for k := 0; k < n; k++ {
		s, err := scenes.Generate(kind, c.size, c.size, seed+uint64(k), depth)
		if err != nil {
			return nil, nil, err
		}
		p := filepath.Join(dir, s.Name+".png")
		if c.variant == "jpeg" {
			p = filepath.Join(dir, s.Name+".jpg")
			if s, err = writeJPEG(p, s, c.quality); err != nil {
				return nil, nil, err
			}
		} else if err := scenes.WritePNG(p, s.Image()); err != nil {
			return nil, nil, err
		}
		if withTruth {
			if err := scenes.WritePNG(filepath.Join(dir, s.Name+".truth.png"), s.TruthImage()); err != nil {
				return nil, nil, err
			}
		}
		list, paths = append(list, s), append(paths, p)
	}
	return list, paths, nil
}

// tuneKind runs `cleave tune` with the kind's flags on c.tune scenes of
// seeds seed-c.tune .. seed-1 (never the reported ones), then segments the
// reported scenes with its best.json into out.
func tuneKind(c *config, kind, dir string, res *kindResult, paths []string, out string) error {
	td := filepath.Join(dir, "tune-in")
	if err := os.MkdirAll(td, 0o755); err != nil {
		return err
	}
	if _, _, err := writeScenes(c, kind, td, c.seed-uint64(c.tune), c.tune, true); err != nil {
		return err
	}
	tuned := filepath.Join(dir, "tuned")
	args := append([]string{"tune", "--images", td, "--truth", td, "--out", tuned, "--metric", c.metric}, res.CleaveFlags...)
	cmd := exec.Command(c.bin, args...)
	var log strings.Builder
	cmd.Stderr = &log
	cmd.Stdout = &log
	if err := cmd.Run(); err != nil {
		return fmt.Errorf("cleave %v: %v\n%s", args, err, log.String())
	}
	best, err := os.ReadFile(filepath.Join(tuned, "best.json"))
	if err != nil {
		return err
	}
	res.TunedSetting = strings.Join(strings.Fields(string(best)), " ")
	fmt.Fprintf(os.Stderr, "evaluate: %s tuned on %d scenes: %s\n", kind, c.tune, res.TunedSetting)
	args = append([]string{"segment", "--force", "--out", out, "--params", filepath.Join(tuned, "best.json")}, paths...)
	t0 := time.Now()
	cmd = exec.Command(c.bin, args...)
	cmd.Stderr = os.Stderr
	if err := cmd.Run(); err != nil {
		return fmt.Errorf("cleave %v: %v", args, err)
	}
	res.TunedSecPerImg = time.Since(t0).Seconds() / float64(len(paths))
	return nil
}

// writeJPEG writes the scene as a JPEG at the given quality and returns a
// copy of the scene whose pixels are the decoded JPEG, so that the Otsu
// column sees the same compressed image as the programs.
func writeJPEG(path string, s *scenes.Scene, quality int) (*scenes.Scene, error) {
	f, err := os.Create(path)
	if err != nil {
		return nil, err
	}
	if err := jpeg.Encode(f, s.Image(), &jpeg.Options{Quality: quality}); err != nil {
		f.Close()
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if err := f.Close(); err != nil {
		return nil, err
	}
	r, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer r.Close()
	img, err := jpeg.Decode(r)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	g, ok := img.(*image.Gray)
	if !ok {
		return nil, fmt.Errorf("%s: decoded as %T, want gray", path, img)
	}
	cp := *s
	cp.Pixels = make([]uint16, len(s.Pixels))
	for y := 0; y < s.Height; y++ {
		for x := 0; x < s.Width; x++ {
			cp.Pixels[y*s.Width+x] = uint16(g.Pix[y*g.Stride+x])
		}
	}
	return &cp, nil
}

func printSummary(c *config, results map[string]kindResult) {
	fmt.Printf("\nper-kind means (%s, %d scenes from seed %d; cnt = |N_pred - N_true| / N_true)\n", c.variant, c.n, c.seed)
	fmt.Printf("%-9s | %6s %6s %6s %6s | %6s %6s %6s %6s | %6s %6s %6s %6s | %7s\n", "kind",
		"cl F1", "mAP", "ARI", "cnt", "ws F1", "mAP", "ARI", "cnt", "ot F1", "mAP", "ARI", "cnt", "cl s/im")
	for _, k := range c.kinds {
		r := results[k]
		ws := "     -      -      -      -"
		if r.Watershed != nil {
			ws = r.Watershed.cols()
		}
		tuned := ""
		if r.Tuned != nil {
			tuned = fmt.Sprintf(" | tuned %s %7.2f s/im", r.Tuned.cols(), r.TunedSecPerImg)
		}
		fmt.Printf("%-9s | %s | %s | %s | %7.2f%s\n", k, r.Cleave.cols(), ws, r.Otsu.cols(), r.CleaveSecPerImg, tuned)
	}
}
