package scenes

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// sceneBytes serializes pixels and truth for byte-level comparison.
func sceneBytes(s *Scene) []byte {
	var b bytes.Buffer
	binary.Write(&b, binary.LittleEndian, s.Pixels)
	binary.Write(&b, binary.LittleEndian, s.Truth)
	return b.Bytes()
}

// Determinism is a project rule: a scene is a function of its options.
func TestDeterminism(t *testing.T) {
	gens := []struct {
		name string
		make func(seed uint64) *Scene
	}{
		{"nuclei16", func(s uint64) *Scene { return Nuclei(NucleiOptions{Width: 256, Height: 192, Count: 10, Seed: s}) }},
		{"nuclei8", func(s uint64) *Scene {
			return Nuclei(NucleiOptions{Width: 256, Height: 256, Count: 8, Seed: s, BitDepth: 8})
		}},
		{"plate16", func(s uint64) *Scene { return Plate(PlateOptions{Width: 256, Height: 256, Seed: s}) }},
		{"plate8", func(s uint64) *Scene { return Plate(PlateOptions{Width: 200, Height: 300, Seed: s, BitDepth: 8}) }},
	}
	for _, g := range gens {
		checkDeterministic(t, g.name, g.make)
	}
}

// checkDeterministic fails the test when gen gives different bytes (see
// sceneBytes) for the same seed twice, or the same bytes for seeds 7 and 8.
func checkDeterministic(t *testing.T, name string, gen func(seed uint64) *Scene) {
	t.Helper()
	a, b, c := sceneBytes(gen(7)), sceneBytes(gen(7)), sceneBytes(gen(8))
	if !bytes.Equal(a, b) {
		t.Errorf("%s: same seed gave different bytes", name)
	}
	if bytes.Equal(a, c) {
		t.Errorf("%s: seeds 7 and 8 gave identical bytes", name)
	}
}

// TestScenesWellFormed checks sizes, value ranges and the label set 1..N.
func TestScenesWellFormed(t *testing.T) {
	for _, s := range []*Scene{
		Nuclei(NucleiOptions{Seed: 1}),
		Nuclei(NucleiOptions{Width: 300, Height: 200, Seed: 2, BitDepth: 8}),
		Plate(PlateOptions{Seed: 1}),
		Plate(PlateOptions{Width: 400, Height: 250, Seed: 2, BitDepth: 8}),
	} {
		n := s.Width * s.Height
		if len(s.Pixels) != n || len(s.Truth) != n {
			t.Fatalf("%s: %d pixels, %d truth, want %d", s.Name, len(s.Pixels), len(s.Truth), n)
		}
		checkLabels(t, s)
	}
}

// checkLabels fails the test when a pixel of s exceeds the range of its
// bit depth, s has no object, or its truth holds a label outside
// 0..Objects or leaves one of 1..Objects empty. It returns the number of
// pixels of each label.
func checkLabels(t *testing.T, s *Scene) []int {
	t.Helper()
	maxv := uint16(1<<s.BitDepth - 1)
	for _, v := range s.Pixels {
		if v > maxv {
			t.Fatalf("%s: value %d exceeds the %d-bit range", s.Name, v, s.BitDepth)
		}
	}
	if s.Objects < 1 {
		t.Errorf("%s: no objects", s.Name)
	}
	present := make([]int, s.Objects+1)
	for _, l := range s.Truth {
		if l < 0 || int(l) > s.Objects {
			t.Fatalf("%s: label %d outside 0..%d", s.Name, l, s.Objects)
		}
		present[l]++
	}
	for l := 1; l <= s.Objects; l++ {
		if present[l] == 0 {
			t.Errorf("%s: label %d empty", s.Name, l)
		}
	}
	return present
}

// adjacency returns, for each unordered pair of distinct object labels,
// whether they are 4-adjacent somewhere, and the number of 4-connected
// pieces of every label.
func adjacency(s *Scene) (touch map[[2]int32]bool, pieces []int) {
	w, h := s.Width, s.Height
	touch = make(map[[2]int32]bool)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			a := s.Truth[y*w+x]
			for _, nb := range [][2]int{{x + 1, y}, {x, y + 1}} {
				if nb[0] >= w || nb[1] >= h {
					continue
				}
				b := s.Truth[nb[1]*w+nb[0]]
				if a != 0 && b != 0 && a != b {
					touch[[2]int32{min(a, b), max(a, b)}] = true
				}
			}
		}
	}
	pieces = make([]int, s.Objects+1)
	seen := make([]bool, w*h)
	for p, l := range s.Truth {
		if l == 0 || seen[p] {
			continue
		}
		pieces[l]++
		stack := []int{p}
		seen[p] = true
		for len(stack) > 0 {
			q := stack[len(stack)-1]
			stack = stack[:len(stack)-1]
			qx, qy := q%w, q/w
			for _, nb := range [][2]int{{qx + 1, qy}, {qx - 1, qy}, {qx, qy + 1}, {qx, qy - 1}} {
				if nb[0] < 0 || nb[1] < 0 || nb[0] >= w || nb[1] >= h {
					continue
				}
				r := nb[1]*w + nb[0]
				if !seen[r] && s.Truth[r] == l {
					seen[r] = true
					stack = append(stack, r)
				}
			}
		}
	}
	return touch, pieces
}

// TestNucleiPairsTouch: with the defaults all 34 nuclei and all
// round(34·0.5/2) = 9 pairs are placed; the two nuclei of a pair carry
// consecutive labels 2k+1, 2k+2 and share a boundary, no other objects
// touch, and every nucleus is one 4-connected piece.
func TestNucleiPairsTouch(t *testing.T) {
	for seed := uint64(1); seed <= 3; seed++ {
		s := Nuclei(NucleiOptions{Seed: seed})
		if s.Objects != 34 {
			t.Errorf("seed %d: %d objects, want 34", seed, s.Objects)
		}
		const pairs = 9
		touch, pieces := adjacency(s)
		for k := int32(0); k < pairs; k++ {
			if !touch[[2]int32{2*k + 1, 2*k + 2}] {
				t.Errorf("seed %d: pair %d/%d does not touch", seed, 2*k+1, 2*k+2)
			}
		}
		for ab := range touch {
			if !(ab[0]%2 == 1 && ab[1] == ab[0]+1 && ab[1] <= 2*pairs) {
				t.Errorf("seed %d: objects %d and %d touch but are not a pair", seed, ab[0], ab[1])
			}
		}
		for l := 1; l <= s.Objects; l++ {
			if pieces[l] != 1 {
				t.Errorf("seed %d: nucleus %d has %d pieces", seed, l, pieces[l])
			}
		}
	}
}

// TestPlateObjectsSeparate: pits and scratches never touch and are each one
// 4-connected piece; the default plate has 1–2 scratches and 5–9 pits.
func TestPlateObjectsSeparate(t *testing.T) {
	for seed := uint64(1); seed <= 4; seed++ {
		s := Plate(PlateOptions{Seed: seed})
		if s.Objects < 6 || s.Objects > 11 {
			t.Errorf("seed %d: %d objects, want 6..11", seed, s.Objects)
		}
		touch, pieces := adjacency(s)
		if len(touch) != 0 {
			t.Errorf("seed %d: %d pairs of objects touch", seed, len(touch))
		}
		for l := 1; l <= s.Objects; l++ {
			if pieces[l] != 1 {
				t.Errorf("seed %d: object %d has %d pieces", seed, l, pieces[l])
			}
		}
	}
}

// localContrast returns, per object, Welch's t statistic of the mean gray
// value inside the object minus the mean over a ring of background pixels
// 3–5 px (Chebyshev) from it and farther than 5 px from any other object.
func localContrast(s *Scene) []float64 {
	w, h := s.Width, s.Height
	type acc struct{ n, sum, sq float64 }
	in := make([]acc, s.Objects+1)
	ring := make([]acc, s.Objects+1)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			v := float64(s.Pixels[y*w+x])
			if l := s.Truth[y*w+x]; l != 0 {
				in[l].n++
				in[l].sum += v
				in[l].sq += v * v
				continue
			}
			var near int32
			dmin, ok := 99, true
			for yy := max(0, y-5); yy <= min(h-1, y+5); yy++ {
				for xx := max(0, x-5); xx <= min(w-1, x+5); xx++ {
					l := s.Truth[yy*w+xx]
					if l == 0 {
						continue
					}
					if near != 0 && l != near {
						ok = false
					}
					near = l
					dmin = min(dmin, max(abs(xx-x), abs(yy-y)))
				}
			}
			if ok && near != 0 && dmin >= 3 {
				ring[near].n++
				ring[near].sum += v
				ring[near].sq += v * v
			}
		}
	}
	ts := make([]float64, s.Objects+1)
	for l := 1; l <= s.Objects; l++ {
		a, b := in[l], ring[l]
		ma, mb := a.sum/a.n, b.sum/b.n
		va, vb := a.sq/a.n-ma*ma, b.sq/b.n-mb*mb
		ts[l] = (ma - mb) / math.Sqrt(va/a.n+vb/b.n)
	}
	return ts
}

func abs(x int) int {
	if x < 0 {
		return -x
	}
	return x
}

// TestTruthMatchesRendering checks that the truth sits on the rendered
// objects: every nucleus is brighter than its surrounding background and
// every pit or scratch darker, by a Welch t statistic above 3 (a 3σ
// difference of means, common practice).
func TestTruthMatchesRendering(t *testing.T) {
	for seed := uint64(1); seed <= 2; seed++ {
		s := Nuclei(NucleiOptions{Seed: seed})
		for l, tv := range localContrast(s)[1:] {
			if !(tv > 3) {
				t.Errorf("nuclei seed %d object %d: inside-minus-ring t = %.2f, want > 3", seed, l+1, tv)
			}
		}
		p := Plate(PlateOptions{Seed: seed})
		for l, tv := range localContrast(p)[1:] {
			if !(-tv > 3) {
				t.Errorf("plate seed %d object %d: ring-minus-inside t = %.2f, want > 3", seed, l+1, -tv)
			}
		}
	}
}

func TestValidate(t *testing.T) {
	checkOptionErrors(t, []optionCase{
		{NucleiOptions{Width: 10}.Validate(), "Width"},
		{NucleiOptions{Height: 100000}.Validate(), "Height"},
		{NucleiOptions{BitDepth: 12}.Validate(), "BitDepth"},
		{NucleiOptions{Count: -1}.Validate(), "Count"},
		{NucleiOptions{Count: 5000}.Validate(), "Count"},
		{NucleiOptions{RadiusMin: 10, RadiusMax: 5}.Validate(), "RadiusMax"},
		{NucleiOptions{RadiusMax: 200}.Validate(), "RadiusMax"},
		{NucleiOptions{PairFraction: 2}.Validate(), "PairFraction"},
		{NucleiOptions{DimFraction: 1.5}.Validate(), "DimFraction"},
		{NucleiOptions{CornerLevel: 2}.Validate(), "CornerLevel"},
		{NucleiOptions{Haze: 3}.Validate(), "Haze"},
		{NucleiOptions{Photons: 1}.Validate(), "Photons"},
		{PlateOptions{Width: 64}.Validate(), "size"},
		{PlateOptions{BitDepth: 1}.Validate(), "BitDepth"},
		{PlateOptions{Pits: 1000}.Validate(), "Pits"},
		{PlateOptions{Scratches: 9}.Validate(), "Scratches"},
		{PlateOptions{Gradient: 0.5}.Validate(), "Gradient"},
		{PlateOptions{Grain: 0.9}.Validate(), "Grain"},
		{PlateOptions{Photons: 5}.Validate(), "Photons"},
	})
	if err := (NucleiOptions{}).Validate(); err != nil {
		t.Errorf("default nuclei options: %v", err)
	}
	if err := (PlateOptions{}).Validate(); err != nil {
		t.Errorf("default plate options: %v", err)
	}
}

// optionCase is an option check's error and the option it must name.
type optionCase struct {
	err  error
	want string
}

// checkOptionErrors fails the test for each case whose error is nil or
// does not name the option.
func checkOptionErrors(t *testing.T, cases []optionCase) {
	t.Helper()
	for i, c := range cases {
		if c.err == nil || !strings.Contains(c.err.Error(), c.want) {
			t.Errorf("case %d: error %v, want one naming %s", i, c.err, c.want)
		}
	}
}

// readReference parses "name value" lines of a committed reference file,
// skipping comments.
func readReference(t *testing.T, path string) map[string]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	m := make(map[string]string)
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		k, v, _ := strings.Cut(line, " ")
		m[k] = v
	}
	return m
}

// bimodalCounts mirrors bimodal_counts() in testdata/skimage_reference.py.
func bimodalCounts() []int {
	c := make([]int, 256)
	for v := range c {
		c[v] = 1 + max(0, 900-(v-60)*(v-60)) + max(0, 2*(1600-(v-170)*(v-170))/3) + (v*7919+13)%97
	}
	return c
}

func fromCounts(counts []int, scale, offset int) []uint16 {
	var px []uint16
	for v, n := range counts {
		for range n {
			px = append(px, uint16(v*scale+offset))
		}
	}
	return px
}

func TestOtsu(t *testing.T) {
	ref := readReference(t, filepath.Join("testdata", "otsu_skimage.txt"))
	skimage := func(name string) uint16 {
		v, err := strconv.Atoi(ref[name])
		if err != nil {
			t.Fatalf("otsu_skimage.txt: %s: %v", name, err)
		}
		return uint16(v)
	}
	cases := []struct {
		name   string
		pixels []uint16
		depth  int
		want   uint16
		source string
	}{
		// Hand-worked: N = 6, S = 450; σ_B ∝ (N s - S c)²/(c(N-c)) is
		// 152100 at t = 10 and 281250 for 20 <= t < 200; first maximum 20.
		{"gap8 hand", []uint16{10, 10, 10, 20, 200, 200}, 8, 20, "hand-worked"},
		{"gap8", []uint16{10, 10, 10, 20, 200, 200}, 8, skimage("gap8"), "skimage threshold_otsu"},
		{"bimodal8", fromCounts(bimodalCounts(), 1, 0), 8, skimage("bimodal8"), "skimage threshold_otsu"},
		{"bimodal16", fromCounts(bimodalCounts(), 250, 17), 16, skimage("bimodal16"), "skimage threshold_otsu"},
		// A constant image has no split; like skimage, return its value.
		{"constant", []uint16{7, 7, 7}, 8, 7, "skimage convention"},
		{"empty", nil, 16, 0, "defined here"},
	}
	for _, c := range cases {
		if got := Otsu(c.pixels, c.depth); got != c.want {
			t.Errorf("%s: Otsu = %d, want %d (%s)", c.name, got, c.want, c.source)
		}
	}
	// Consistency of the two skimage cases: the 16-bit image is the 8-bit
	// one under v -> 250v + 17, and Otsu's criterion is invariant under an
	// increasing affine map (Otsu 1979).
	if a, b := skimage("bimodal8"), skimage("bimodal16"); int(b) != 250*int(a)+17 {
		t.Errorf("reference file inconsistent: %d vs %d", a, b)
	}
}

func TestOtsuObjectsLabels(t *testing.T) {
	// Two 8-connected blobs (one joined only diagonally) on a dark field;
	// worked by hand.
	s := &Scene{Width: 5, Height: 4, BitDepth: 8, Pixels: []uint16{
		9, 0, 0, 0, 9,
		0, 9, 0, 0, 9,
		0, 0, 0, 0, 0,
		9, 9, 0, 0, 0,
	}}
	want := []int32{
		1, 0, 0, 0, 2,
		0, 1, 0, 0, 2,
		0, 0, 0, 0, 0,
		3, 3, 0, 0, 0,
	}
	got := OtsuObjects(s, false)
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("bright objects: got %v, want %v", got, want)
		}
	}
	dark := OtsuObjects(s, true)
	// The dark pixels form one 8-connected background piece.
	for i, v := range s.Pixels {
		if (v == 0) != (dark[i] == 1) {
			t.Fatalf("dark objects: got %v", dark)
		}
	}
}

// TestSheppLoganSkimage compares the phantom with scikit-image's
// shepp_logan_phantom() (Debian python3-skimage 0.19.3) through
// testdata/shepp_logan_skimage.txt, written by skimage_reference.py.
// scikit-image stores its phantom as an 8-bit PNG (0.1 becomes 25/255)
// and its sampling grid differs from the pixel centres used here, so
// the comparison is loose: each gray level's pixel count within 3 % (or 10
// pixels), and 8x8 block means within a mean absolute difference of 0.006
// with at most 80 of the 2500 blocks off by more than 0.05 (boundary
// pixels). Measured when this test was written: counts within 1.2 % except
// 128 vs 122 pixels at level 0.4, mean block difference 0.0035, 42 blocks
// above 0.05; a left-right mirror of the phantom gives 0.013 and 200.
func TestSheppLoganSkimage(t *testing.T) {
	f, err := os.Open(filepath.Join("testdata", "shepp_logan_skimage.txt"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	next := func() []string {
		for sc.Scan() {
			line := strings.TrimSpace(sc.Text())
			if line != "" && !strings.HasPrefix(line, "#") {
				return strings.Fields(line)
			}
		}
		t.Fatal("shepp_logan_skimage.txt: unexpected end")
		return nil
	}
	num := func(s string) float64 {
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatalf("shepp_logan_skimage.txt: %v", err)
		}
		return v
	}
	const n = 400
	vals, regions := SheppLogan(n)

	hdr := next()
	nl := int(num(hdr[1]))
	levels := make([]float64, nl)
	refCount := make([]float64, nl)
	for i := range nl {
		row := next()
		levels[i], refCount[i] = num(row[0]), num(row[1])
	}
	// Assign each of our values to the nearest reference level.
	count := make([]float64, nl)
	for _, v := range vals {
		best := 0
		for i := range levels {
			if math.Abs(v-levels[i]) < math.Abs(v-levels[best]) {
				best = i
			}
		}
		count[best]++
	}
	for i := range levels {
		// Small regions are mostly boundary: allow 10 pixels there.
		if d := math.Abs(count[i]-refCount[i]) / refCount[i]; d > 0.03 && math.Abs(count[i]-refCount[i]) > 10 {
			t.Errorf("level %.3f: %g pixels, skimage %g (%.1f %% off)", levels[i], count[i], refCount[i], 100*d)
		}
	}

	bh := next()
	nb, bs := int(num(bh[1])), int(num(bh[2]))
	if nb*bs != n {
		t.Fatalf("block grid %d x %d does not cover %d", nb, bs, n)
	}
	var sumDiff float64
	off := 0
	for bi := range nb {
		row := next()
		for bj := range nb {
			var m float64
			for i := bi * bs; i < (bi+1)*bs; i++ {
				for j := bj * bs; j < (bj+1)*bs; j++ {
					m += vals[i*n+j]
				}
			}
			d := math.Abs(m/float64(bs*bs) - num(row[bj]))
			sumDiff += d
			if d > 0.05 {
				off++
			}
		}
	}
	if mean := sumDiff / float64(nb*nb); mean > 0.006 || off > 80 {
		t.Errorf("block means: mean |diff| %.4f (want <= 0.006), %d blocks off by > 0.05 (want <= 80)", mean, off)
	}

	// Regions: a region has one value; outside the head (region 0) the
	// value is 0; the head's rim (skull, ellipse 1 only) is 1.0 (Toft 1996).
	regionValue := map[int32]float64{}
	for p, r := range regions {
		if v, ok := regionValue[r]; ok && v != vals[p] {
			t.Fatalf("region %d holds values %g and %g", r, v, vals[p])
		}
		regionValue[r] = vals[p]
	}
	if regionValue[0] != 0 {
		t.Errorf("outside value %g, want 0", regionValue[0])
	}
	if regionValue[1] != 1 {
		t.Errorf("region 1 (ellipse 1 alone, the skull) value %g, want 1", regionValue[1])
	}
	for r := int32(1); r < int32(len(regionValue)); r++ {
		if _, ok := regionValue[r]; !ok {
			t.Errorf("region labels not contiguous: %d missing", r)
		}
	}
}

func TestImageConversion(t *testing.T) {
	s := &Scene{Width: 3, Height: 2, BitDepth: 16, Pixels: []uint16{0, 1, 256, 65535, 300, 7}, Truth: []int32{0, 1, 2, 3, 4, 300}, Objects: 300}
	g16 := s.Image()
	for i, want := range s.Pixels {
		r, _, _, _ := g16.At(i%3, i/3).RGBA()
		if uint16(r) != want {
			t.Errorf("16-bit pixel %d: %d, want %d", i, r, want)
		}
	}
	tr := s.TruthImage()
	for i, want := range s.Truth {
		if got := tr.Gray16At(i%3, i/3).Y; int32(got) != want {
			t.Errorf("truth pixel %d: %d, want %d", i, got, want)
		}
	}
}

func BenchmarkNuclei512(b *testing.B) {
	for i := 0; b.Loop(); i++ {
		Nuclei(NucleiOptions{Seed: uint64(i)})
	}
}

func BenchmarkPlate512(b *testing.B) {
	for i := 0; b.Loop(); i++ {
		Plate(PlateOptions{Seed: uint64(i)})
	}
}
