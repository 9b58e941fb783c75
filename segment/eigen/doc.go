// Package eigen computes the k smallest eigenpairs of the symmetric
// normalized Laplacian
//
//	L = I - D^-1/2 W D^-1/2
//
// of a sparse weighted graph (Shi and Malik 2000; Chung 1997). Its
// eigenvectors z give Shi and Malik's generalized eigenvectors
// y = D^-1/2 z of (D - W) y = λ D y.
//
// The null vector z_0 = D^1/2 1 / ‖D^1/2 1‖ (eigenvalue 0 for a connected
// graph) is known in closed form and is used exactly: the solver works in
// its orthogonal complement and returns it as the first pair.
//
// Small graphs are solved densely (gonum's mat.EigenSym). Larger ones are
// solved coarse to fine (Cour, Benezit and Shi 2005): heavy-edge matching
// builds a hierarchy of Galerkin coarse graphs W_c = Pᵀ W P, the coarsest is
// solved densely, and the eigenvectors are interpolated level by level and
// refined with block LOBPCG (Knyazev 2001) in the deflated space,
// preconditioned by a multigrid cycle on the same hierarchy (at residual
// targets of 1e-5 and above only the input graph is refined). All
// reductions run in a fixed order over fixed row chunks, so results are
// byte-identical for any number of workers.
//
// SmallestStencil takes the pixel graph in stencil form
// (affinity.StencilGraph: weights per neighbour offset, no column
// indices, half the memory of compressed rows at r = 5); its input level
// is never copied into compressed rows, and the result is the one
// Smallest gives on the compressed rows, bit for bit.
//
// On amd64 with AVX the sparse products and the dense block operations
// of LOBPCG run in assembly kernels (stencil_amd64.s, blockops_amd64.s)
// that do, lane by lane, the Go loops' multiplies and adds in their
// order, without fused multiply-adds: the results are the Go code's bit
// for bit, on any machine. The purego build tag leaves them out.
//
// With Options.SinglePrecond (segment's k-way cut of the pixel graph) the
// multigrid preconditioner's products run in single precision (single.go,
// stencil32_amd64.s): float32 vectors and sums, eight lanes a register.
// The preconditioner only chooses LOBPCG's search directions, so the
// result meets the same residual target; it is not the double-precision
// path's result bit for bit.
package eigen
