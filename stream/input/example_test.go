package input_test

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"strings"

	"github.com/gridloupe/gridloupe/stream/input"
)

// A CSV recording from the invented North Weir pumping station, cabinet
// DC-2, with a t column: the sample rate comes from it, frames come in the
// order asked for, and the unused column is reported.
func ExampleNewCSV() {
	const rec = `# North Weir pumping station, cabinet DC-2 (invented)
t,ia,va,note
0.0000,1.5,0.0,start
0.0001,2.5,10.0,
0.0002,3.5,20.0,
`
	c, err := input.NewCSV("dc2.csv", strings.NewReader(rec), []string{"va", "ia"})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("fs %.0f Hz, extra %v\n", c.SampleRate(), c.Extra())
	dst := make([]float64, 2*8)
	n, err := c.ReadFrames(dst)
	fmt.Println(n, dst[:2*n], err == nil || errors.Is(err, io.EOF))
	// Output:
	// fs 10000 Hz, extra [note]
	// 3 [0 1.5 10 2.5 20 3.5] true
}

// Header faults name the file, line and what is allowed.
func ExampleHeaderError() {
	_, err := input.NewCSV("dc2.csv", strings.NewReader("t;va;ia\n0;1,5;2\n"), []string{"va"})
	var he *input.HeaderError
	fmt.Println(errors.As(err, &he), errors.Is(err, input.ErrHeader))
	fmt.Println(err)
	// Output:
	// true true
	// dc2.csv:1: header row is separated by ';': comma-separated only, with '.' decimals
}

// A two-channel 16-bit PCM WAV file, built in memory: raw values are the
// integer counts.
func ExampleNewWAV() {
	le := binary.LittleEndian
	var f bytes.Buffer
	f.WriteString("RIFF")
	binary.Write(&f, le, uint32(36+8))
	f.WriteString("WAVEfmt ")
	binary.Write(&f, le, []uint32{16})
	binary.Write(&f, le, []uint16{1, 2})         // PCM, 2 channels
	binary.Write(&f, le, []uint32{10240, 40960}) // sample rate, byte rate
	binary.Write(&f, le, []uint16{4, 16})        // block align, bits
	f.WriteString("data")
	binary.Write(&f, le, []uint32{8})
	binary.Write(&f, le, []int16{1000, -250, 32767, -32768})

	w, err := input.NewWAV("dc2.wav", &f, 2)
	if err != nil {
		fmt.Println(err)
		return
	}
	dst := make([]float64, 8)
	n, err := w.ReadFrames(dst)
	fmt.Println(w.SampleRate(), n, dst[:2*n], err)
	// Output:
	// 10240 2 [1000 -250 32767 -32768] EOF
}
