// Package pcmtcp is the TCP pcm source: Conn dials a sender of raw or
// GLF1-framed samples (read with package pcm's readers) and redials with
// backoff whenever the link drops, reporting each outage as a
// *stream.Gap. It is apart from package pcm so that a program reading
// files, FIFOs and standard input (the offline executable) links no
// network stack.
package pcmtcp
