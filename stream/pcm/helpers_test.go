package pcm

// loop is a reader that replays the same bytes forever (an endless stream).
type loop struct {
	b   []byte
	pos int
}

func (l *loop) Read(p []byte) (int, error) {
	n := copy(p, l.b[l.pos:])
	l.pos = (l.pos + n) % len(l.b)
	return n, nil
}
