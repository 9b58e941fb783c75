package segment

import (
	"context"
	"math"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/segment/eigen"
)

// kmeansRestarts is the number of seeded k-means++ restarts in k-way
// clustering.
const kmeansRestarts = 8

// kway performs k-way spectral clustering (Ng, Jordan and Weiss 2002): the
// K eigenvectors z_0..z_{K-1} of the smallest eigenvalues of
// L = I - D^-1/2 W D^-1/2 form the rows u_i ∈ R^K, each normalized to unit
// length, which k-means++ then clusters. With K = 0 the number of segments
// is chosen from the largest eigengap λ_K - λ_{K-1} for 2 <= K <= maxSegments
// (von Luxburg 2007, section 8.3). The graph must be connected.
func kway(ctx context.Context, g *affinity.Graph, area []int, p Params) (*cutResult, int, error) {
	K := p.Segments
	m := K
	if K == 0 {
		m = p.MaxSegments + 1
	}
	m = min(m, g.N)
	if err := ctx.Err(); err != nil {
		return nil, 0, err
	}
	ep, err := eigen.SmallestContext(ctx, g, m, eigen.Options{Workers: p.Workers, Seed: p.Seed})
	var short shortfall
	if !short.note(err, ep, 0, g.N) {
		return nil, 0, err
	}
	if K == 0 {
		K = 2
		bestGap := -1.0
		for k := 2; k < m; k++ {
			if gap := ep.Values[k] - ep.Values[k-1]; gap > bestGap {
				K, bestGap = k, gap
			}
		}
		if m <= 2 {
			K = m
		}
	}
	K = min(K, g.N)
	u := make([]float64, g.N*K)
	for i := 0; i < g.N; i++ {
		var s float64
		for j := 0; j < K; j++ {
			v := ep.Vectors[j][i]
			u[i*K+j] = v
			s += v * v
		}
		if s = math.Sqrt(s); s > 0 {
			for j := 0; j < K; j++ {
				u[i*K+j] /= s
			}
		}
	}
	wt := make([]float64, g.N)
	for i := range wt {
		wt[i] = float64(nodeArea(area, i))
	}
	lab, err := kmeansContext(ctx, u, g.N, K, K, wt, kmeansRestarts, p.Seed, p.Workers)
	if err != nil {
		return nil, 0, err
	}
	// Renumber clusters by lowest node, drop empty ones.
	n := relabel(lab, K)
	return &cutResult{region: lab, regions: n, eigenvalues: ep.Values, short: short}, K, nil
}
