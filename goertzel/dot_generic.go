//go:build !amd64 || purego

package goertzel

// dotVec is false: there is no vector kernel on this build.
const dotVec = false

// dot2 returns Σ x[i]·y[i] and Σ x[i]·z[i] over len(x) (y and z at least
// as long). Without the amd64 kernel (other architectures, or the purego
// build tag) it is dot twice, whatever vec says.
func dot2(_ bool, x, y, z []float64) (sy, sz float64) {
	y, z = y[:len(x)], z[:len(x)]
	return dot(x, y), dot(x, z)
}
