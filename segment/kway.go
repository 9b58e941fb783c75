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
// (von Luxburg 2007, section 8.3). The graph must be connected. A pixel
// graph (area nil: every node one pixel) is solved with the
// preconditioner's products in single precision
// (eigen.Options.SinglePrecond), as kwayStencil solves it, so that both
// forms give one result.
func kway(ctx context.Context, g *affinity.Graph, area []int, p Params) (*cutResult, int, error) {
	solve := func(m int) (*eigen.Result, error) {
		return eigen.SmallestContext(ctx, g, m, eigen.Options{Workers: p.Workers, Seed: p.Seed, SinglePrecond: area == nil})
	}
	return kwayWith(ctx, g.N, solve, area, p)
}

// kwayWith is kway on a connected graph of n nodes whose m smallest
// eigenpairs solve returns.
func kwayWith(ctx context.Context, n int, solve func(m int) (*eigen.Result, error), area []int, p Params) (*cutResult, int, error) {
	K := p.Segments
	m := K
	if K == 0 {
		m = p.MaxSegments + 1
	}
	m = min(m, n)
	if err := ctx.Err(); err != nil {
		return nil, 0, err
	}
	ep, err := solve(m)
	var short shortfall
	if !short.note(err, ep, 0, n) {
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
	K = min(K, n)
	u := make([]float64, n*K)
	for i := 0; i < n; i++ {
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
	wt := make([]float64, n)
	for i := range wt {
		wt[i] = float64(nodeArea(area, i))
	}
	lab, err := kmeansContext(ctx, u, n, K, K, wt, kmeansRestarts, p.Seed, p.Workers)
	if err != nil {
		return nil, 0, err
	}
	// Renumber clusters by lowest node, drop empty ones.
	nreg := relabel(lab, K)
	return &cutResult{region: lab, regions: nreg, eigenvalues: ep.Values, short: short}, K, nil
}

// kwayStencil is kwayComponents on the pixel graph in stencil form. A
// connected graph (the rule: no edge of a pixel graph is left out unless
// its ends differ by about 9 sigma_I) is solved in that form; one of
// several components falls back to compressed rows (the same graph, so
// the same result), which costs their memory.
func kwayStencil(ctx context.Context, sg *affinity.StencilGraph, p Params) (*cutResult, error) {
	n := sg.Nodes()
	if _, nc := stencilComponents(sg); nc > 1 || n < 2 {
		return kwayComponents(ctx, sg.CSR(), nil, p)
	}
	solve := func(m int) (*eigen.Result, error) {
		return eigen.SmallestStencil(ctx, sg, m, eigen.Options{Workers: p.Workers, Seed: p.Seed, SinglePrecond: true})
	}
	c, _, err := kwayWith(ctx, n, solve, nil, p)
	return c, err
}
