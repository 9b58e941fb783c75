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
