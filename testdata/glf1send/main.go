// Command glf1send is a reference GLF1 sender: it reads a WAV recording
// and writes its samples as GLF1 frames (README "The GLF1 frame") to a
// file, to standard output, or to the first TCP client that connects, so a
// firmware engineer can compare a sender's bytes and a gateway can be tried
// without hardware. It lives under testdata so that it is not part of the
// product build:
//
//	go run ./testdata/glf1send -wav rec.wav -channels 6 -listen 127.0.0.1:7001
//	go run ./testdata/glf1send -wav rec.wav -channels 6 -o frames.glf1
//
// Integer WAV samples are sent as their counts (use -format s16le, s24le or
// s32le wide enough for them), float WAV samples with -format f32le.
// -realtime paces the frames at the WAV's sample rate.
package main

import (
	"bufio"
	"flag"
	"fmt"
	"io"
	"net"
	"os"
	"time"

	"github.com/gridloupe/gridloupe/stream/input"
	"github.com/gridloupe/gridloupe/stream/pcm"
)

func main() {
	wavPath := flag.String("wav", "", "WAV `FILE` to send; required")
	channels := flag.Int("channels", 0, "channel count of the WAV file; required")
	format := flag.String("format", "s32le", "sample format: s16le, s24le, s32le or f32le")
	per := flag.Int("per", 256, "samples per channel in a frame, 1..4096")
	out := flag.String("o", "", "write frames to `FILE` (- = standard output)")
	listen := flag.String("listen", "", "serve frames to the first TCP client on `host:port`")
	realtime := flag.Bool("realtime", false, "pace frames at the recording's sample rate")
	flag.Parse()
	if err := send(*wavPath, *channels, *format, *per, *out, *listen, *realtime); err != nil {
		fmt.Fprintln(os.Stderr, "glf1send:", err)
		os.Exit(1)
	}
}

func send(wavPath string, channels int, format string, per int, out, listen string, realtime bool) error {
	f, ok := pcm.ParseFormat(format)
	if !ok || wavPath == "" || channels < 1 || (out == "") == (listen == "") {
		return fmt.Errorf("usage: -wav FILE -channels N [-format %v] (-o FILE | -listen host:port)", pcm.FormatNames())
	}
	in, err := os.Open(wavPath)
	if err != nil {
		return err
	}
	defer in.Close()
	wav, err := input.NewWAV(wavPath, bufio.NewReader(in), channels)
	if err != nil {
		return err
	}
	var w io.Writer
	switch {
	case out == "-":
		w = os.Stdout
	case out != "":
		o, err := os.Create(out)
		if err != nil {
			return err
		}
		defer o.Close()
		w = o
	default:
		ln, err := net.Listen("tcp", listen)
		if err != nil {
			return err
		}
		defer ln.Close()
		c, err := ln.Accept()
		if err != nil {
			return err
		}
		defer c.Close()
		w = c
	}
	bw := bufio.NewWriter(w)
	enc, err := pcm.NewGLF1Writer(bw, channels, f)
	if err != nil {
		return err
	}
	buf := make([]float64, max(1, min(per, pcm.MaxGLF1N))*channels)
	start := time.Now()
	var sent uint64
	for {
		n, rerr := wav.ReadFrames(buf)
		if n > 0 {
			if err := enc.Write(buf[:n*channels], n); err != nil {
				return err
			}
			sent += uint64(n)
			if realtime {
				if err := bw.Flush(); err != nil {
					return err
				}
				due := start.Add(time.Duration(float64(sent) / wav.SampleRate() * float64(time.Second)))
				time.Sleep(time.Until(due))
			}
		}
		if rerr == io.EOF {
			return bw.Flush()
		}
		if rerr != nil {
			return rerr
		}
	}
}
