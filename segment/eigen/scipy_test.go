package eigen

import (
	"context"
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"testing"

	"github.com/cleave-seg/cleave/affinity"
	"github.com/cleave-seg/cleave/examples/loudskip"
)

// debianPython is Debian's interpreter, whose python3-scipy is the
// reference; other interpreters on the path may lack it.
const debianPython = "/usr/bin/python3"

var eigshScript = filepath.Join("..", "..", "testdata", "eigen", "eigsh_check.py")

// scipySmallest runs testdata/eigen/eigsh_check.py on g and returns the k
// smallest eigenvalues of L computed by scipy.sparse.linalg.eigsh.
func scipySmallest(t *testing.T, g *affinity.Graph, k int) []float64 {
	t.Helper()
	if err := exec.Command(debianPython, "-c", "import scipy.sparse.linalg, scipy.io").Run(); err != nil {
		loudskip.Skip(t, "Debian python3-scipy not installed (apt-get install -y python3-scipy); scipy cross-check did not run")
	}
	path := filepath.Join(t.TempDir(), "graph.mtx")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := g.WriteMatrixMarket(f, "segment/eigen scipy cross-check"); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command(debianPython, eigshScript, path, strconv.Itoa(k)).Output()
	if err != nil {
		t.Fatalf("%s: %v", eigshScript, err)
	}
	var res struct {
		Values []float64 `json:"values"`
	}
	if err := json.Unmarshal(out, &res); err != nil {
		t.Fatalf("%s output %q: %v", eigshScript, out, err)
	}
	if len(res.Values) != k {
		t.Fatalf("scipy returned %d values, want %d", len(res.Values), k)
	}
	return res.Values
}

// TestScipy cross-checks eigenvalues with scipy.sparse.linalg.eigsh
// (ARPACK, shift-invert about -1e-3, tol 1e-6) from Debian's
// python3-scipy on graphs written in Matrix Market format.
func TestScipy(t *testing.T) {
	cases := []struct {
		name string
		g    *affinity.Graph
		k    int
	}{
		{"planar 3000", planarGraph(3000, 21), 6},
		{"planar 500", planarGraph(500, 22), 2},
		{"random 1500", randomGraph(t, 1500, 3000, 23), 8},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			want := scipySmallest(t, c.g, c.k)
			r, err := Smallest(c.g, c.k, Options{Tol: 1e-9})
			if err != nil {
				t.Fatal(err)
			}
			for i, w := range want {
				// scipy eigsh: 1e-6 relative (1e-12 absolute for λ_0 = 0).
				if math.Abs(r.Values[i]-w) > 1e-12+1e-6*math.Abs(w) {
					t.Errorf("λ_%d = %.12g, scipy %.12g", i, r.Values[i], w)
				}
			}
		})
	}
}

// TestScipyPixelGraph cross-checks the pixel-graph path (wideGraph: four
// to one coarsening, W-cycles throughout, guard directions) at the
// default residual target against scipy's eigsh (shift-invert, tol 1e-6,
// Debian python3-scipy) on the coins pixel graph (r = 5, 29184 nodes):
// the eigenvalues must agree to 1e-6 relative, the agreement the pixel
// graph's speed work promises; the stencil form too, with and without
// Options.SinglePrecond.
func TestScipyPixelGraph(t *testing.T) {
	if testing.Short() {
		t.Skip("short mode")
	}
	g := coinsGraph(t)
	if !wideGraph(newLevel(g.N, g.RowPtr, g.Col, g.Weight)) {
		t.Fatal("the coins pixel graph should take the wide-graph path")
	}
	want := scipySmallest(t, g, 6)
	r, err := Smallest(g, 6, Options{})
	if err != nil {
		t.Fatal(err)
	}
	// The same graph in stencil form (the path segment takes for k-way
	// cuts of the pixel graph).
	rs, err := SmallestStencil(context.Background(), coinsStencil(t), 6, Options{})
	if err != nil {
		t.Fatal(err)
	}
	// And with the preconditioner's products in single precision, as
	// segment's k-way cut of the pixel graph asks.
	r32, err := SmallestStencil(context.Background(), coinsStencil(t), 6, Options{SinglePrecond: true})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name string
		r    *Result
	}{{"compressed rows", r}, {"stencil", rs}, {"stencil, single-precision preconditioner", r32}} {
		for i, w := range want {
			if got := c.r.Values[i]; math.Abs(got-w) > 1e-12+1e-6*math.Abs(w) {
				t.Errorf("%s: λ_%d = %.12g, scipy %.12g (relative %.2g)", c.name, i, got, w, math.Abs(got/w-1))
			}
		}
	}
}
