//go:build amd64 && !purego

package goertzel

// dotVec reports whether this CPU runs dot2AVX: it needs AVX2 and FMA, the
// features Bank's kernel checks (vecOK, bank_amd64.go), so it is that check,
// set once at package initialisation and never changed.
var dotVec = vecOK

// dot2AVX returns Σ x·y and Σ x·z over len(x); see dot_amd64.s.
//
//go:noescape
func dot2AVX(x, y, z []float64) (sy, sz float64)

// dot2 returns Σ x[i]·y[i] and Σ x[i]·z[i] over len(x) (y and z at least
// as long): the AVX2 kernel when vec is set (Leakage sets it from dotVec),
// else dot twice.
func dot2(vec bool, x, y, z []float64) (sy, sz float64) {
	y, z = y[:len(x)], z[:len(x)]
	if vec {
		return dot2AVX(x, y, z)
	}
	return dot(x, y), dot(x, z)
}
