package gateway

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"net"
	"os"
	"strings"
	"sync"
	"time"

	"github.com/gridloupe/gridloupe/metrics"
	"github.com/gridloupe/gridloupe/store"
	"github.com/gridloupe/gridloupe/stream/encode"
)

// ExportRequest asks for stored aggregates of one level in [From, To).
type ExportRequest struct {
	Interval string    `json:"interval"` // 3s, 10min or 2h
	From     time.Time `json:"from"`     // zero = from the oldest
	To       time.Time `json:"to"`       // zero = to the newest
	Format   string    `json:"format"`   // jsonl, csv, table or wide (encode.ParseFormat)
	// For the table formats: the banner's title and the IEEE 519 reference
	// of the site (the store alone does not know them).
	Title     string            `json:"title,omitempty"`
	Reference *encode.Reference `json:"reference,omitempty"`
	// What is "" for aggregates, WhatEvents or WhatWaveform (with ID).
	What string `json:"what,omitempty"`
	ID   string `json:"id,omitempty"`
}

// exportFormat parses req.Format ("" is jsonl).
func exportFormat(req ExportRequest) (encode.Format, error) {
	if req.Format == "" {
		return encode.FormatJSONL, nil
	}
	f, ok := encode.ParseFormat(req.Format)
	if !ok {
		return 0, fmt.Errorf("%w: format %q: allowed are %s", ErrExport, req.Format, strings.Join(encode.FormatNames(), ", "))
	}
	return f, nil
}

// exportInterval parses req.Interval: a stored level, not the 200 ms window.
func exportInterval(req ExportRequest) (metrics.Interval, error) {
	iv, ok := metrics.ParseInterval(req.Interval)
	if !ok || iv == metrics.Int200ms {
		return 0, fmt.Errorf("%w: interval %q: allowed are 3s, 10min, 2h", ErrExport, req.Interval)
	}
	return iv, nil
}

// ErrExport reports a bad export request.
var ErrExport = errors.New("gateway: export")

// ErrNoDaemon reports that no daemon answers on the export socket.
var ErrNoDaemon = errors.New("gateway: no daemon answers")

// ErrExportCut reports an export answer that did not complete.
var ErrExportCut = errors.New("gateway: export incomplete")

// exportTimeout bounds a whole export over the socket.
const exportTimeout = 10 * time.Minute

// requestTimeout is how long the server waits for a peer's request line:
// one request is served at a time, so an idle peer must not hold the
// socket from the next export for long.
const requestTimeout = 3 * time.Second

// WriteExport writes the stored records matching req to w in the replay
// schema. It is used by the daemon's socket and by `gridloupe export` when
// no daemon holds the file.
func WriteExport(w io.Writer, db *store.DB, req ExportRequest) error {
	iv, err := exportInterval(req)
	if err != nil {
		return err
	}
	layout, err := db.Layout()
	if err != nil {
		if errors.Is(err, store.ErrNoLayout) {
			return nil // an empty store: nothing to export
		}
		return err
	}
	f, err := exportFormat(req)
	if err != nil {
		return err
	}
	enc, err := encode.New(f, w, layout, encode.TableOptions{Title: req.Title, Reference: req.Reference})
	if err != nil {
		return fmt.Errorf("%w: %w", ErrExport, err)
	}
	if err := db.Query(iv, req.From, req.To, enc.Write); err != nil {
		return err
	}
	return enc.Flush()
}

// SocketPath returns the daemon's local export socket for a store file.
func SocketPath(storePath string) string { return storePath + ".sock" }

// ServeExport answers export requests on a unix socket until ctx ends.
// Protocol: the client sends one JSON ExportRequest line; the server
// answers "ok\n" and the records, or "error: <message>\n". One request is
// served at a time (the store allows concurrent readers, but the gateway
// board has little to spare).
func ServeExport(ctx context.Context, path string, db *store.DB, log *slog.Logger) error {
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	_ = os.Remove(path) // a stale socket from a killed process
	l, err := net.Listen("unix", path)
	if err != nil {
		return fmt.Errorf("gateway: export socket: %w", err)
	}
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		<-ctx.Done()
		l.Close()
	}()
	defer func() {
		l.Close()
		wg.Wait()
		os.Remove(path)
	}()
	for {
		c, err := l.Accept()
		if err != nil {
			if ctx.Err() != nil {
				return nil
			}
			return fmt.Errorf("gateway: export socket: %w", err)
		}
		serveOne(c, db, log)
	}
}

func serveOne(c net.Conn, db *store.DB, log *slog.Logger) {
	defer c.Close()
	c.SetDeadline(time.Now().Add(requestTimeout))
	line, err := bufio.NewReaderSize(c, 4096).ReadString('\n')
	if err != nil {
		return // an idle or vanished peer
	}
	c.SetDeadline(time.Now().Add(exportTimeout))
	var req ExportRequest
	if err := json.Unmarshal([]byte(line), &req); err != nil {
		fmt.Fprintf(c, "error: bad request: %v\n", err)
		return
	}
	if req.What == WhatEvents || req.What == WhatWaveform {
		bw := bufio.NewWriterSize(c, 64<<10)
		bw.WriteString("ok\n")
		if err := writeWhat(bw, db, req); err != nil {
			fmt.Fprintf(bw, "%s%s\n", trailerErr, strings.ReplaceAll(err.Error(), "\n", " "))
		} else {
			bw.WriteString(trailerOK + "\n")
		}
		bw.Flush()
		return
	}
	// validate before answering ok, so a bad request gets a clear error
	if _, err := exportInterval(req); err != nil {
		refuse(c, err)
		return
	}
	if _, err := exportFormat(req); err != nil {
		refuse(c, err)
		return
	}
	bw := bufio.NewWriterSize(c, 64<<10)
	bw.WriteString("ok\n")
	if err := WriteExport(bw, db, req); err != nil {
		log.Warn("export failed", "err", err)
		fmt.Fprintf(bw, "%s%s\n", trailerErr, strings.ReplaceAll(err.Error(), "\n", " "))
	} else {
		bw.WriteString(trailerOK + "\n")
	}
	bw.Flush()
}

// refuse answers a bad request with its error; RequestExport puts
// ErrExport back in front, so the text carries it once.
func refuse(w io.Writer, err error) {
	fmt.Fprintf(w, "error: %s\n", strings.TrimPrefix(err.Error(), ErrExport.Error()+": "))
}

// The answer ends with a trailer line, so a client can tell a complete
// export from one cut by an error or a dying daemon. Records never start
// with '#'.
const (
	trailerOK  = "#end ok"
	trailerErr = "#end error: "
)

// RequestExport asks a running daemon for an export and copies the answer
// to w.
func RequestExport(path string, req ExportRequest, w io.Writer) error {
	c, err := net.DialTimeout("unix", path, 2*time.Second)
	if err != nil {
		return fmt.Errorf("%w on %s: %w", ErrNoDaemon, path, err)
	}
	defer c.Close()
	b, _ := json.Marshal(req)
	if _, err := c.Write(append(b, '\n')); err != nil {
		return fmt.Errorf("gateway: export request: %w", err)
	}
	c.SetDeadline(time.Now().Add(exportTimeout))
	br := bufio.NewReaderSize(c, 64<<10)
	head, err := br.ReadString('\n')
	if err != nil {
		return fmt.Errorf("gateway: export answer: %w", err)
	}
	if head != "ok\n" {
		return fmt.Errorf("%w: %s", ErrExport, strings.TrimSpace(strings.TrimPrefix(head, "error: ")))
	}
	// Copy whole lines until the trailer, which must come last; a line
	// cut short by the connection ending is not copied.
	for {
		line, err := br.ReadBytes('\n')
		if err != nil {
			return fmt.Errorf("%w: the answer ended without its trailer: %v", ErrExportCut, err)
		}
		if bytes.HasPrefix(line, []byte("#end ")) {
			t := strings.TrimSpace(string(line))
			if t == trailerOK {
				return nil
			}
			return fmt.Errorf("%w: the daemon reported: %s", ErrExportCut, strings.TrimPrefix(t, trailerErr))
		}
		if _, err := w.Write(line); err != nil {
			return err
		}
	}
}
