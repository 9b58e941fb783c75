package segment

// Per-label sums over a whole label map, taken in runs of one label.
//
// The class and object stages add a value per pixel into its label's
// total in raster order (sum[l] += v[i]). Written that way, each
// addition waits for the store of the one before it whenever two
// neighbouring pixels share a label, which in a region map is almost
// always. Here a run of equal labels is added in a register that starts
// from the label's total and is stored once at the run's end: the same
// additions in the same order, so every total is bit for bit what the
// pixel-by-pixel loop gives (tested against it). Pixel counts are added
// per run as integers, exact in float64 below 2^53.

// runEnd returns the end of the run of label l that starts at i: the
// least j > i with labels[j] != l, or len(labels).
func runEnd(labels []int32, i int) int {
	l := labels[i]
	j := i + 1
	for j < len(labels) && labels[j] == l {
		j++
	}
	return j
}

// countLabels adds to area[l] the number of pixels of each label l.
func countLabels[T int | float64](labels []int32, area []T) {
	for i := 0; i < len(labels); {
		j := runEnd(labels, i)
		area[labels[i]] += T(j - i)
		i = j
	}
}

// sumLabels adds v[i] to sum[labels[i]] for every pixel i in raster
// order and, when area is not nil, counts the pixels into area.
func sumLabels[T float32 | float64](labels []int32, v []T, sum, area []float64) {
	for i := 0; i < len(labels); {
		j := runEnd(labels, i)
		l := labels[i]
		acc := sum[l]
		for _, x := range v[i:j] {
			acc += float64(x)
		}
		sum[l] = acc
		if area != nil {
			area[l] += float64(j - i)
		}
		i = j
	}
}

// sumRatioLabels adds lum[i] / max(field[i], fieldFloor) to
// sum[labels[i]] for every pixel i in raster order: the region sums of
// the scores log(I/B) (groupClasses, initialScores, rejudge).
func sumRatioLabels(labels []int32, lum, field []float32, sum []float64) {
	for i := 0; i < len(labels); {
		j := runEnd(labels, i)
		l := labels[i]
		acc := sum[l]
		f := field[i:j]
		for k, x := range lum[i:j] {
			acc += float64(x) / floorField(float64(f[k]))
		}
		sum[l] = acc
		i = j
	}
}

// backgroundRatio is the ratio of an intensity x to the background
// field f that the object stages judge by (contrastOfGrid, outshone),
// with the field kept off zero:
//
//	r = x / f                    where f >= fieldFloor
//	r = 1 + (x - f) / fieldFloor  where f <  fieldFloor
//
// Both are 1 + (x - f) / max(f, fieldFloor), and they meet at the floor
// (x/floor = 1 + (x - floor)/floor), so r is continuous in f; the first
// is computed as x / f, so a field above the floor gives the plain ratio
// bit for bit. The floor bounds the division only, not the level x is
// compared with: a background pixel (x = f) always has ratio 1 and
// contrast |r - 1| = 0, however dark the field. Dividing by max(f, floor)
// alone (the former rule, x / max(f, floor)) gave a dark field's
// background (a fluorescence frame whose offset the percentile
// normalization took off: f near 0.005 where the brightest nuclei set
// the range) a contrast of nearly 1 - f/floor = 0.9 and its dim nuclei
// (x near the floor) less than that, so they were lost or outlined as
// their blocky superpixels (held-out scenes of nuclei spanning 30 times
// in brightness, choice seeds: object F1 0.73 -> 0.94). A NaN field stays NaN.
//
// The class stage keeps the floored division (the region scores of
// sumRatioLabels, the noise of noiseCV): its scores compare regions with
// one another, and there a dark field below the floor scores darker than
// its background, so that a run with the wrong polarity (a dark field
// segmented with a bright background) takes the whole field for one
// object and says so (the one-object warning) instead of returning
// pieces of halo; and a constant black image has a background of zero
// noise, which the noise rule (noiseBound) would take at its word.
// Measured on the choice seeds (Go generators 15110-15119, othershapes.py
// 1360-1369 and 1600-1604, span 2000-2003), object F1 with the shifted
// ratio in the object stages alone against the class stage too: nuclei
// 0.999 against 0.997, jpeg 0.991 against 0.988, clusters 0.827 against
// 0.825, span 0.944 against 0.933 (with the faint rule's one-sided
// spread), the rest within 0.001.
func backgroundRatio(x, f float64) float64 {
	if f >= fieldFloor || f != f {
		return x / f
	}
	return 1 + (x-f)/fieldFloor
}

// floorField is math.Max(f, fieldFloor) without the call: for the
// positive constant fieldFloor the two agree on every f, NaN (which
// stays NaN: the comparison is false) and infinities included.
func floorField(f float64) float64 {
	if f < fieldFloor {
		return fieldFloor
	}
	return f
}

// fillRun sets every label of run to l (a run of one label renumbered
// at once: the same labels as renumbering it pixel by pixel).
func fillRun(run []int32, l int32) {
	for k := range run {
		run[k] = l
	}
}
