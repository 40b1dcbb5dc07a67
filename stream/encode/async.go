package encode

import "github.com/gridloupe/gridloupe/metrics"

// Async runs a Writer on a goroutine of its own, so that encoding and
// writing overlap the producer's work (decoding and the per-sample path)
// on a board with more than one core. Write copies the record into a
// reused buffer; the buffers go over in batches (two of them: the producer
// fills one while the goroutine writes the other), so that the goroutine
// is woken once per batch rather than per record, and the records are
// written in order. Once the wrapped Writer fails, its error (as it
// returned it) comes back from the next Write, Flush or Close, and nothing
// more is written; records queued behind the failed one are dropped, as
// the synchronous writer would have stopped there.
//
// Write, Flush and Close are called from one goroutine (the producer);
// Close stops the writing goroutine and must be called after the last
// Write or Flush. After its buffers are sized, Write does not allocate.
type Async struct {
	w       Writer
	free    chan *batch // batches the producer may fill
	work    chan *batch // filled batches in order; nil asks for a flush
	flushed chan error  // the flush's result
	stop    chan struct{}
	done    chan struct{} // closed when the goroutine has ended
	cur     *batch        // the batch being filled, nil when none
	err     error         // set by the goroutine before it closes stop
	closed  bool
}

// batch is a run of records handed over at once.
type batch struct {
	recs []*metrics.Record
	n    int
}

// asyncBatches is how many batches exist: one filled, one written.
const asyncBatches = 2

// NewAsync starts the goroutine that writes to w, with batches of size
// records (at least 1) shaped for s.
func NewAsync(w Writer, s *metrics.Setup, size int) *Async {
	size = max(size, 1)
	a := &Async{w: w, free: make(chan *batch, asyncBatches), work: make(chan *batch, asyncBatches+1),
		flushed: make(chan error, 1), stop: make(chan struct{}), done: make(chan struct{})}
	for range asyncBatches {
		b := &batch{recs: make([]*metrics.Record, size)}
		for i := range b.recs {
			b.recs[i] = metrics.NewRecord(s)
		}
		a.free <- b
	}
	go a.run()
	return a
}

func (a *Async) run() {
	defer close(a.done)
	for b := range a.work {
		if b == nil {
			if a.err == nil {
				if err := a.w.Flush(); err != nil {
					a.fail(err)
				}
			}
			a.flushed <- a.err
			continue
		}
		for _, r := range b.recs[:b.n] {
			if a.err != nil {
				break
			}
			if err := a.w.Write(r); err != nil {
				a.fail(err)
			}
		}
		b.n = 0
		a.free <- b
	}
}

func (a *Async) fail(err error) {
	a.err = err
	close(a.stop)
}

// Write queues a copy of r. It returns the wrapped Writer's error once it
// has failed.
func (a *Async) Write(r *metrics.Record) error {
	select {
	case <-a.stop:
		return a.err
	default:
	}
	if a.cur == nil {
		select {
		case <-a.stop:
			return a.err
		case a.cur = <-a.free:
		}
	}
	b := a.cur
	r.CopyTo(b.recs[b.n])
	if b.n++; b.n == len(b.recs) {
		a.send()
	}
	return nil
}

// send hands the current batch over; it never blocks: every batch and
// one flush request fit in the channel.
func (a *Async) send() {
	if a.cur != nil && a.cur.n > 0 {
		a.work <- a.cur
		a.cur = nil
	}
}

// Flush waits until every queued record is written, then flushes the
// wrapped Writer; it returns the first error of either.
func (a *Async) Flush() error {
	select {
	case <-a.stop:
		return a.err
	default:
	}
	a.send()
	a.work <- nil
	return <-a.flushed
}

// Close writes what is queued (without flushing) and stops the goroutine;
// it returns the wrapped Writer's error, if it failed. Calling it again
// only returns that error; Write and Flush must not follow it.
func (a *Async) Close() error {
	if !a.closed {
		a.closed = true
		a.send()
		close(a.work)
		<-a.done
	}
	return a.err
}

var _ Writer = (*Async)(nil)
