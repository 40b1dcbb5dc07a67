//go:build (!amd64 && !arm64) || purego

package goertzel

// Without a vector kernel (armv7 and other architectures, or the purego
// build tag) every Bank uses the pure-Go loops.
const (
	vecLanes = 1
	vecMaxK  = 1
	vecOK    = false
	vecName  = ""
)

// writeVec is never called here (vecOK is false); it keeps Write the same
// on every build.
func (b *Bank) writeVec(x []float64) { b.writeGo(x) }
