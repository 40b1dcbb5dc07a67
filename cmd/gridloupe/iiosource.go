package main

import (
	"context"
	"fmt"
	"log/slog"
	"time"

	"github.com/gridloupe/gridloupe/config"
	"github.com/gridloupe/gridloupe/stream/iio"
)

// iioInput is an opened IIO device with its shutdown.
type iioInput struct {
	src     *iio.Source
	release func()
}

// close stops the watcher, disables the buffer and restores the _en
// files. runDaemon defers it, so it runs on every way out: a signal, a
// source error, a panic unwinding the pipeline goroutine (which is the
// goroutine that reads the device).
func (in *iioInput) close() error {
	in.release()
	return in.src.Close()
}

// openIIO opens the daemon's iio source and waits for its first scan,
// whose time is the records' base. ctx ending releases a blocked read.
func openIIO(ctx context.Context, cfg *config.Config, log *slog.Logger) (*iioInput, time.Time, error) {
	s := cfg.Source
	elems := make([]string, len(cfg.Channels))
	for i, ch := range cfg.Channels {
		elems[i] = ch.IIO
	}
	src, err := iio.Open(iio.Config{Device: s.Device, Channels: elems, Sysfs: s.Sysfs, Dev: s.Dev,
		BufferLength: s.BufferLength, SampleRate: cfg.SampleRateHz, Logger: log})
	if err != nil {
		return nil, time.Time{}, fmt.Errorf("source: %w", err)
	}
	in := &iioInput{src: src, release: src.Stop(ctx)}
	first, err := src.First()
	if err != nil {
		return nil, time.Time{}, fmt.Errorf("source: %w", joinClose(err, in.close()))
	}
	log.Info("iio device capturing", "device", s.Device, "sample_rate_hz", src.SampleRate(), "scan_bytes", src.ScanBytes())
	return in, first, nil
}

// joinClose keeps the close error beside the first one.
func joinClose(err, cerr error) error {
	if cerr == nil {
		return err
	}
	return fmt.Errorf("%w (and while restoring the device: %v)", err, cerr)
}
