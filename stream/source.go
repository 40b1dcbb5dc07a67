package stream

// FrameReader is a source of frames: one sample of every channel,
// interleaved, in the configured channel order, as raw values
// (engineering value = raw·scale + offset).
//
// ReadFrames fills dst with up to len(dst)/channels whole frames. As with
// io.Reader, frames > 0 may come with an error; io.EOF means no more data.
type FrameReader interface {
	ReadFrames(dst []float64) (frames int, err error)
}
