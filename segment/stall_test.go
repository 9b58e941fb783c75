package segment

import (
	"compress/gzip"
	"context"
	"os"
	"path/filepath"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
)

// readFixtureGraph reads a gzipped Matrix Market graph from testdata.
func readFixtureGraph(t *testing.T, name string) *affinity.Graph {
	t.Helper()
	f, err := os.Open(filepath.Join("testdata", name))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	zr, err := gzip.NewReader(f)
	if err != nil {
		t.Fatal(err)
	}
	g, err := affinity.ReadMatrixMarket(zr)
	if err != nil {
		t.Fatal(err)
	}
	return g
}

// The superpixel graphs on which LOBPCG used to stall (written by
// --save-graph from scikit-image's bundled photographs before negligible
// edges were dropped: moon.png with the contour cue off, whose groups of
// nodes hung on weights of 1e-45, and ihc.png with sigma-i 0.03 and the
// contour cue off, whose bottom eigenvalues cluster at 1e-9): with the
// negligible bridges dropped, as RegionGraph now does, the
// whole recursive bisection meets every residual target, and the
// fixtures really do hold such bridges.
func TestStalledGraphsSolve(t *testing.T) {
	if testing.Short() {
		t.Skip("two 4000-node bisections")
	}
	for _, name := range []string{"moon-contour-off.mtx.gz", "ihc-sigma-i-0.03.mtx.gz"} {
		t.Run(name, func(t *testing.T) {
			g := readFixtureGraph(t, name)
			nnz := g.NNZ()
			_, before := Components(g)
			g.DropNegligible()
			_, after := Components(g)
			if g.NNZ() >= nnz || after <= before {
				t.Fatalf("no negligible bridge in the fixture: %d -> %d entries, %d -> %d components", nnz, g.NNZ(), before, after)
			}
			p := defaultParams()
			p.Workers = 2
			res, err := bisect(context.Background(), g, nil, p.cutParams(), cutOptions{stability: true})
			if err != nil {
				t.Fatal(err)
			}
			if res.short.residual != 0 {
				t.Fatalf("a solve stopped at residual %.3g above its target %.3g (graph of %d nodes)", res.short.residual, res.short.tol, res.short.nodes)
			}
			t.Logf("%d regions, components %d -> %d", res.regions, before, after)
		})
	}
}
