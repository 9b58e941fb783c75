package segment

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/cleave-seg/cleave/segment/score"
)

// TestLloydMatchesPlain checks that lloyd with Hamerly's bounds gives the
// labels and the inertia of plain Lloyd iterations (lloydPlain, the
// textbook algorithm: every point against every centre in every
// iteration) bit for bit, on unit-length rows as k-way clustering makes
// them (clustered and uniform) and on weighted points.
func TestLloydMatchesPlain(t *testing.T) {
	for _, c := range []struct {
		n, dim, k int
		spread    float64 // 0: uniform on the sphere
		weighted  bool
	}{
		{5000, 6, 6, 0.05, false},
		{5000, 6, 6, 0.3, true},
		{3000, 3, 8, 0, false},
		{2000, 12, 12, 0.2, true},
		{800, 2, 2, 0.5, false},
	} {
		t.Run(fmt.Sprintf("n%d_dim%d_k%d_s%g_w%v", c.n, c.dim, c.k, c.spread, c.weighted), func(t *testing.T) {
			rng := rand.New(rand.NewPCG(11003, uint64(c.n+c.dim)))
			x := make([]float64, c.n*c.dim)
			centres := make([]float64, c.k*c.dim)
			for q := range centres {
				centres[q] = rng.NormFloat64()
			}
			var wt []float64
			if c.weighted {
				wt = make([]float64, c.n)
			}
			for i := 0; i < c.n; i++ {
				row := x[i*c.dim : (i+1)*c.dim]
				g := rng.IntN(c.k)
				var s float64
				for d := range row {
					if c.spread > 0 {
						row[d] = centres[g*c.dim+d] + c.spread*rng.NormFloat64()
					} else {
						row[d] = rng.NormFloat64()
					}
					s += row[d] * row[d]
				}
				for d := range row {
					row[d] /= math.Sqrt(s)
				}
				if wt != nil {
					wt[i] = float64(1 + rng.IntN(9))
				}
			}
			for r := uint64(0); r < 4; r++ {
				got, _, gi := lloyd(context.Background(), x, c.n, c.dim, c.k, wt, rand.New(rand.NewPCG(r, 7)))
				want, wi := lloydPlain(context.Background(), x, c.n, c.dim, c.k, wt, rand.New(rand.NewPCG(r, 7)))
				if !slices.Equal(got, want) || gi != wi {
					t.Fatalf("restart %d: labels equal %v, inertia %v, plain Lloyd %v", r, slices.Equal(got, want), gi, wi)
				}
			}
		})
	}
}

// lloydPlain is lloyd as it was before Hamerly's bounds: it runs one seeding and its Lloyd iterations; once ctx is done it
// returns at its next check with a partial result that the caller
// discards.
func lloydPlain(ctx context.Context, x []float64, n, dim, k int, wt []float64, rng *rand.Rand) ([]int32, float64) {
	cent := make([]float64, k*dim)
	dist := make([]float64, n)
	pick := func(prob func(i int) float64) int {
		var tot float64
		for i := 0; i < n; i++ {
			tot += prob(i)
		}
		if tot <= 0 {
			return rng.IntN(n)
		}
		u := rng.Float64() * tot
		for i := 0; i < n; i++ {
			u -= prob(i)
			if u < 0 {
				return i
			}
		}
		return n - 1
	}
	first := pick(func(i int) float64 { return weightOf(wt, i) })
	copy(cent[:dim], x[first*dim:(first+1)*dim])
	for i := 0; i < n; i++ {
		dist[i] = sqDist(x[i*dim:(i+1)*dim], cent[:dim])
	}
	for c := 1; c < k; c++ {
		if ctx.Err() != nil {
			return nil, math.Inf(1)
		}
		j := pick(func(i int) float64 { return weightOf(wt, i) * dist[i] })
		copy(cent[c*dim:(c+1)*dim], x[j*dim:(j+1)*dim])
		for i := 0; i < n; i++ {
			if d := sqDist(x[i*dim:(i+1)*dim], cent[c*dim:(c+1)*dim]); d < dist[i] {
				dist[i] = d
			}
		}
	}
	lab := make([]int32, n)
	for i := range lab {
		lab[i] = -1
	}
	sum := make([]float64, k*dim)
	cnt := make([]float64, k)
	var inertia float64
	for iter := 0; iter < 300; iter++ {
		if ctx.Err() != nil {
			return nil, math.Inf(1)
		}
		changed := false
		inertia = 0
		for i := 0; i < n; i++ {
			xi := x[i*dim : (i+1)*dim]
			bc, bd := 0, math.Inf(1)
			for c := 0; c < k; c++ {
				if d := sqDist(xi, cent[c*dim:(c+1)*dim]); d < bd {
					bc, bd = c, d
				}
			}
			if lab[i] != int32(bc) {
				lab[i] = int32(bc)
				changed = true
			}
			inertia += weightOf(wt, i) * bd
		}
		if !changed {
			break
		}
		clear(sum)
		clear(cnt)
		for i := 0; i < n; i++ {
			c := int(lab[i])
			w := weightOf(wt, i)
			cnt[c] += w
			for d := 0; d < dim; d++ {
				sum[c*dim+d] += w * x[i*dim+d]
			}
		}
		for c := 0; c < k; c++ {
			if cnt[c] == 0 {
				continue // keep an emptied centre where it was
			}
			for d := 0; d < dim; d++ {
				cent[c*dim+d] = sum[c*dim+d] / cnt[c]
			}
		}
	}
	return lab, inertia
}

// clusteredRows returns n unit rows of dimension dim around k random
// centres (Gaussian spread), as k-way clustering normalizes its
// embedding, and the planted cluster of each row.
func clusteredRows(n, dim, k int, spread float64, seed uint64) ([]float64, []int32) {
	rng := rand.New(rand.NewPCG(seed, 1))
	centres := make([]float64, k*dim)
	for q := range centres {
		centres[q] = rng.NormFloat64()
	}
	x := make([]float64, n*dim)
	truth := make([]int32, n)
	for i := 0; i < n; i++ {
		row := x[i*dim : (i+1)*dim]
		g := rng.IntN(k)
		truth[i] = int32(g)
		var s float64
		for d := range row {
			row[d] = centres[g*dim+d] + spread*rng.NormFloat64()
			s += row[d] * row[d]
		}
		for d := range row {
			row[d] /= math.Sqrt(s)
		}
	}
	return x, truth
}

// plantedCase is a set of planted clusters for the sampled k-means tests:
// n points, the clusters' spread, weighted points or not, and the seed.
type plantedCase struct {
	n        int
	spread   float64
	weighted bool
	seed     uint64
}

// TestKmeansSampled checks the sampled restarts (kmeansSampleMin) against
// the restarts on all points: on planted clusters above the threshold
// (seeds 13600-13602, chosen for this test), weighted and not, the two
// partitions agree to ARI >= 0.999 (segment/score's ARI, itself checked
// against scikit-learn); below the threshold the labels are the full
// restarts' exactly.
func TestKmeansSampled(t *testing.T) {
	for _, c := range []plantedCase{
		{kmeansSampleMin + 4321, 0.3, false, 13600},
		{150000, 0.4, true, 13601},
		{100000, 0.2, false, 13602},
	} {
		t.Run(fmt.Sprintf("n%d_s%g_w%v", c.n, c.spread, c.weighted), func(t *testing.T) {
			const dim, k = 6, 6
			x, _ := clusteredRows(c.n, dim, k, c.spread, c.seed)
			wt := plantedWeights(c.n, c.seed, c.weighted)
			got, err := kmeansContext(context.Background(), x, c.n, dim, k, wt, kmeansRestarts, 5, 2)
			if err != nil {
				t.Fatal(err)
			}
			full, err := kmeansRun(context.Background(), x, c.n, dim, k, wt, kmeansRestarts, 5, 2, c.n+1)
			if err != nil {
				t.Fatal(err)
			}
			differ := 0
			ari := score.ARI(got, full)
			for i := range got {
				if got[i] != full[i] {
					differ++
				}
			}
			if ari < 0.999 {
				t.Fatalf("sampled restarts against full restarts: ARI %.6f (%d of %d labels differ)", ari, differ, c.n)
			}
			// Below the threshold nothing is sampled: the same call gives
			// the full restarts' labels exactly.
			m := kmeansSampleMin - 1
			a, _ := kmeansContext(context.Background(), x[:m*dim], m, dim, k, nil, kmeansRestarts, 5, 2)
			b, _ := kmeansRun(context.Background(), x[:m*dim], m, dim, k, nil, kmeansRestarts, 5, 2, m+1)
			if !slices.Equal(a, b) {
				t.Fatalf("below kmeansSampleMin the labels differ from the full restarts")
			}
		})
	}
}

// BenchmarkKmeans116k clusters 116,352 unit rows of dimension 6 into 6
// clusters with kmeansRestarts restarts, the k-way step of the pixel
// graph of a 384 x 303 image with --segments 6: Hamerly's bounds (hamerly)
// against plain Lloyd iterations (plain), on the same points, and the
// whole clustering as kway calls it (sampled: the restarts on a sample
// of kmeansSample points, then all points; full: the restarts on all
// points), on two workers.
func BenchmarkKmeans116k(b *testing.B) {
	const n, dim, k = 116352, 6, 6
	x, _ := clusteredRows(n, dim, k, 0.4, 11005)
	hamerly := func(ctx context.Context, x []float64, n, dim, k int, wt []float64, rng *rand.Rand) ([]int32, float64) {
		lab, _, in := lloyd(ctx, x, n, dim, k, wt, rng)
		return lab, in
	}
	for _, v := range []struct {
		name string
		f    func(context.Context, []float64, int, int, int, []float64, *rand.Rand) ([]int32, float64)
	}{{"hamerly", hamerly}, {"plain", lloydPlain}} {
		b.Run(v.name, func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				for r := uint64(0); r < kmeansRestarts; r++ {
					v.f(context.Background(), x, n, dim, k, nil, rand.New(rand.NewPCG(1, r)))
				}
			}
		})
	}
	for _, v := range []struct {
		name string
		min  int
	}{{"sampled", kmeansSampleMin}, {"full", n + 1}} {
		b.Run(v.name, func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				if _, err := kmeansRun(context.Background(), x, n, dim, k, nil, kmeansRestarts, 1, 2, v.min); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// TestKmeansSampledRenumbered checks that iterating the sample's end
// points once per partition (their centres put in one order,
// canonicalOrder) gives the partition that iterating every restart's end
// point as it came gives (the former rule, written out here): on planted
// clusters (seeds 13850-13852, chosen for this test), weighted and not,
// the two label maps are equal up to the numbering of the clusters.
func TestKmeansSampledRenumbered(t *testing.T) {
	for _, c := range []plantedCase{
		{kmeansSampleMin + 999, 0.3, false, 13850},
		{70000, 0.5, true, 13851},
		{90000, 0.8, false, 13852},
	} {
		t.Run(fmt.Sprintf("n%d_s%g_w%v", c.n, c.spread, c.weighted), func(t *testing.T) {
			const dim, k = 6, 6
			x, _ := clusteredRows(c.n, dim, k, c.spread, c.seed)
			wt := plantedWeights(c.n, c.seed, c.weighted)
			got, err := kmeansContext(context.Background(), x, c.n, dim, k, wt, kmeansRestarts, 5, 2)
			if err != nil {
				t.Fatal(err)
			}
			// The former rule: the sample, the restarts on it, every
			// end point with distinct centres (as numbered) iterated on
			// all points, the least inertia (ties to the lower restart).
			stride := (c.n + kmeansSample - 1) / kmeansSample
			ns := (c.n + stride - 1) / stride
			xs := make([]float64, ns*dim)
			var ws []float64
			if wt != nil {
				ws = make([]float64, ns)
			}
			for s := 0; s < ns; s++ {
				copy(xs[s*dim:(s+1)*dim], x[s*stride*dim:(s*stride+1)*dim])
				if wt != nil {
					ws[s] = wt[s*stride]
				}
			}
			var want []int32
			best := math.Inf(1)
			var seen [][]float64
			distinct := 0
			for r := 0; r < kmeansRestarts; r++ {
				rng := rand.New(rand.NewPCG(5, 0x6b6d65616e73+uint64(r)))
				_, cent, _ := lloyd(context.Background(), xs, ns, dim, k, ws, rng)
				if slices.ContainsFunc(seen, func(s []float64) bool { return slices.Equal(s, cent) }) {
					continue
				}
				seen = append(seen, slices.Clone(cent))
				distinct++
				lab, in := iterate(context.Background(), x, c.n, dim, k, wt, cent)
				if in < best {
					want, best = lab, in
				}
			}
			// Equal up to numbering: a one-to-one map of the labels.
			fw, bw := map[int32]int32{}, map[int32]int32{}
			for i := range got {
				a, b := got[i], want[i]
				if m, ok := fw[a]; ok && m != b {
					t.Fatalf("point %d: label %d maps to %d and %d", i, a, m, b)
				}
				if m, ok := bw[b]; ok && m != a {
					t.Fatalf("point %d: label %d comes from %d and %d", i, b, m, a)
				}
				fw[a], bw[b] = b, a
			}
			t.Logf("%d restarts with distinct numbered centres", distinct)
		})
	}
}

// plantedWeights returns integer weights 1..9 for n points (seeded), or
// nil when not weighted.
func plantedWeights(n int, seed uint64, weighted bool) []float64 {
	if !weighted {
		return nil
	}
	rng := rand.New(rand.NewPCG(seed, 2))
	wt := make([]float64, n)
	for i := range wt {
		wt[i] = float64(1 + rng.IntN(9))
	}
	return wt
}

// TestIterateBlocksMatchesIterate checks iterateBlocks against iterate
// (Lloyd's iterations on Hamerly's bounds, itself checked against plain
// Lloyd iterations by TestLloydMatchesPlain) from the same k-means++
// centres: on planted clusters (seeds 14100-14103, chosen for this test),
// weighted and not, of fewer points than a block and of many blocks with
// a short last one, the labels are equal and the inertia agrees to 1e-12
// relative (the centres' sums are added in another order); one worker and
// three (with arrays reused from the previous restart) give the same
// labels and inertia bit for bit.
func TestIterateBlocksMatchesIterate(t *testing.T) {
	for _, c := range []plantedCase{
		{kmeansBlock - 5, 0.3, false, 14100},
		{20000 + 17, 0.4, true, 14101},
		{30000, 0.2, false, 14102},
		{12345, 0.8, true, 14103},
	} {
		t.Run(fmt.Sprintf("n%d_s%g_w%v", c.n, c.spread, c.weighted), func(t *testing.T) {
			const dim, k = 6, 6
			x, _ := clusteredRows(c.n, dim, k, c.spread, c.seed)
			wt := plantedWeights(c.n, c.seed, c.weighted)
			var sc blockScratch // reused by the three-worker runs
			for r := uint64(0); r < 3; r++ {
				cent := seedCentres(context.Background(), x, c.n, dim, k, wt, rand.New(rand.NewPCG(c.seed, r)))
				c1, c3 := slices.Clone(cent), slices.Clone(cent)
				want, wi := iterate(context.Background(), x, c.n, dim, k, wt, cent)
				got, gi := iterateBlocks(context.Background(), x, c.n, dim, k, wt, c1, 1, nil)
				got3, gi3 := iterateBlocks(context.Background(), x, c.n, dim, k, wt, c3, 3, &sc)
				if !slices.Equal(got, want) || math.Abs(gi-wi) > 1e-12*wi {
					t.Fatalf("restart %d: labels equal %v, inertia %v, iterate's %v", r, slices.Equal(got, want), gi, wi)
				}
				if !slices.Equal(got3, got) || gi3 != gi || !slices.Equal(c3, c1) {
					t.Fatalf("restart %d: three workers differ from one", r)
				}
			}
		})
	}
}
