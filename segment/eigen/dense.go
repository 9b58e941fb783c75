package eigen

// denseLevel returns the count (all n-1 if count < 0) smallest eigenpairs of L restricted to the
// orthogonal complement of z0 on a small level. With the Householder
// reflector H = I - β v vᵀ, v = z0 + e1, β = 2/(vᵀv), which maps z0 to
// -e1, the matrix H L H has (in exact arithmetic) a zero first row and
// column; its trailing (n-1)×(n-1) block B is L in the basis H e_2..H e_n
// of the complement. B = U Λ Uᵀ by gonum's mat.EigenSym and the
// eigenvectors are z = H [0; u]. H L H is formed by the rank-two update of
// Golub and Van Loan (section 8.3.1): p = β L v, q = p - (β/2)(vᵀp) v,
// H L H = L - v qᵀ - q vᵀ. The work arrays and the eigenvalues are
// scratch of pl (pool.floats), the vectors a block of pl.
func denseLevel(pl *pool, lv *level, count int) ([]float64, *block, error) {
	n := lv.n
	a := pl.floats(n * n)
	var cb []int32
	var wb []float32
	for i := 0; i < n; i++ {
		a[i*n+i] = 1
		cols, wts := lv.row(i, cb, wb)
		if lv.sg != nil {
			cb, wb = cols, wts
		}
		for p, jj := range cols {
			j := int(jj)
			a[i*n+j] -= float64(wts[p]) * lv.s[i] * lv.s[j]
		}
	}
	v := pl.floats(n)
	copy(v, lv.z0)
	v[0] += 1
	beta := 2 / vdot(v, v)
	p := pl.floats(n)
	for i := 0; i < n; i++ {
		p[i] = beta * vdot(a[i*n:i*n+n], v)
	}
	half := 0.5 * beta * vdot(v, p)
	q := pl.floats(n)
	for i := range q {
		q[i] = p[i] - half*v[i]
	}
	nb := n - 1
	b := pl.floats(nb * nb)
	for i := 1; i < n; i++ {
		for j := 1; j < n; j++ {
			b[(i-1)*nb+j-1] = a[i*n+j] - v[i]*q[j] - q[i]*v[j]
		}
	}
	vals, u, err := pl.symEig(nb, b)
	if err != nil {
		return nil, nil, err
	}
	if count < 0 {
		count = nb
	}
	out := pl.get(n, count)
	for c := 0; c < count; c++ {
		// z = H [0; u] = y - β v (vᵀ y), y = [0; u].
		var vty float64
		for i := 1; i < n; i++ {
			vty += v[i] * u[(i-1)*nb+c]
		}
		out.v[c] = -beta * v[0] * vty
		for i := 1; i < n; i++ {
			out.v[i*count+c] = u[(i-1)*nb+c] - beta*v[i]*vty
		}
	}
	return vals[:count], out, nil
}
