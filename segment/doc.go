// Package segment turns an affinity graph into regions by normalized cuts
// (Shi and Malik 2000) and groups the regions into intensity classes and
// objects. It owns the Laplacian and its eigenproblem (through segment/eigen),
// recursive two-way cuts, k-way spectral clustering (Ng, Jordan and Weiss
// 2002), class grouping, touching-object separation and small-region
// cleanup. Run is the one entry point every command uses; the package knows
// nothing of files or flags.
package segment
