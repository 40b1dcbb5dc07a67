// Package pcm reads raw and framed PCM sample streams: interleaved
// little-endian s16le, s24le, s32le or f32le samples from a file, a FIFO
// or standard input (a TCP sender through package pcmtcp), either bare or
// in GLF1 frames (the project's own frame: magic, format, channel count,
// sample count, sequence number, first-sample index, samples, CRC-32).
// Readers deliver frames of raw values (stream.FrameReader) and report
// lost samples as *stream.Gap. It imports stream and stream/input only for
// their error types; it holds no electrical rules, and no network stack.
package pcm
