//go:build (amd64 || arm64) && !purego

package goertzel

// writeVec is Write's path through the vector kernels: one kernel call per
// pass, each over the whole block.
func (b *Bank) writeVec(x []float64) {
	for _, p := range b.passes {
		vecKernel(x, &b.coef[p.off], &b.s1[p.off], &b.s2[p.off], p.k)
	}
}
