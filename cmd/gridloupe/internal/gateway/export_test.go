package gateway

import (
	"bytes"
	"context"
	"errors"
	"net"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/stream/encode"
)

// TestExportSocket: a complete answer ends with the trailer and is copied
// without it; an answer cut short (a dying daemon) is an error, never a
// silently short export.
func TestExportSocket(t *testing.T) {
	r := newRig(t, filepath.Join(t.TempDir(), "g.db"), 1)
	var recs []*metrics.Record
	for i := range 300 { // more than one query page
		rec := metrics.NewRecord(r.setup)
		rec.Interval, rec.Start, rec.DurationS, rec.Samples = metrics.Int3s, t0.Add(time.Duration(i)*3*time.Second), 3, 19200
		recs = append(recs, rec)
	}
	if err := r.db.PutAggregates(recs); err != nil {
		t.Fatal(err)
	}
	sock := filepath.Join(t.TempDir(), "x.sock")
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- ServeExport(ctx, sock, r.db, nil) }()
	defer func() { cancel(); <-done }()
	var out bytes.Buffer
	var err error
	for range 100 { // wait for the listener
		if err = RequestExport(sock, ExportRequest{Interval: "3s", Format: "jsonl"}, &out); !errors.Is(err, ErrNoDaemon) {
			break
		}
		time.Sleep(10 * time.Millisecond)
	}
	if err != nil {
		t.Fatal(err)
	}
	if n := strings.Count(out.String(), "\n"); n != 300 || strings.Contains(out.String(), "#end") {
		t.Errorf("%d lines (want 300, trailer stripped)", n)
	}
	// a bad request is refused before "ok", its error named once (DESIGN
	// "Errors and exit codes": usage errors name what is allowed, nothing on stdout)
	for _, c := range []struct {
		req  ExportRequest
		want string
	}{
		{ExportRequest{Interval: "200ms"}, `gateway: export: interval "200ms": allowed are 3s, 10min, 2h`},
		{ExportRequest{Interval: "3s", Format: "xml"}, `gateway: export: format "xml": allowed are ` + strings.Join(encode.FormatNames(), ", ")},
	} {
		out.Reset()
		if err := RequestExport(sock, c.req, &out); !errors.Is(err, ErrExport) || err.Error() != c.want || out.Len() != 0 {
			t.Errorf("request %+v: err %v, output %q; want %q and nothing written", c.req, err, out.String(), c.want)
		}
	}

	// a server that dies mid-answer
	cut := filepath.Join(t.TempDir(), "cut.sock")
	l, err := net.Listen("unix", cut)
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	go func() {
		c, err := l.Accept()
		if err != nil {
			return
		}
		buf := make([]byte, 512)
		c.Read(buf)
		c.Write([]byte("ok\n{\"interval\":\"3s\"}\n{\"interval\""))
		c.Close()
	}()
	out.Reset()
	if err := RequestExport(cut, ExportRequest{Interval: "3s"}, &out); !errors.Is(err, ErrExportCut) {
		t.Errorf("cut answer: err %v, want ErrExportCut", err)
	}
}

// TestExportIdlePeer: a local client that connects and sends nothing holds
// the socket for at most requestTimeout, so the next export is answered
// soon after (README, The store: export).
func TestExportIdlePeer(t *testing.T) {
	// src: requestTimeout (3 s) plus scheduling slack on a loaded machine, common practice
	const bound = 3*time.Second + 4*time.Second
	r := newRig(t, filepath.Join(t.TempDir(), "g.db"), 1)
	sock := filepath.Join(t.TempDir(), "idle.sock")
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- ServeExport(ctx, sock, r.db, nil) }()
	defer func() { cancel(); <-done }()
	var idle net.Conn
	var err error
	for range 100 {
		if idle, err = net.Dial("unix", sock); err == nil {
			break
		}
		time.Sleep(10 * time.Millisecond)
	}
	if err != nil {
		t.Fatal(err)
	}
	defer idle.Close()
	start := time.Now()
	var out bytes.Buffer
	if err := RequestExport(sock, ExportRequest{Interval: "3s", Format: "jsonl"}, &out); err != nil {
		t.Fatal(err)
	}
	if el := time.Since(start); el > bound {
		t.Errorf("export answered after %v behind an idle peer, want under %v", el, bound)
	}
}
