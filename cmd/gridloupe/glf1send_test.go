package main

import (
	"bytes"
	"encoding/binary"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
)

// writeWAV16 writes interleaved six-channel counts as a 16-bit PCM WAV
// (RIFF/WAVE: the 44-byte canonical header, then the samples).
func writeWAV16(t *testing.T, path string, nch, rate int, vals []float64) {
	t.Helper()
	le := binary.LittleEndian
	var b bytes.Buffer
	data := len(vals) * 2
	b.WriteString("RIFF")
	b.Write(le.AppendUint32(nil, uint32(36+data)))
	b.WriteString("WAVEfmt ")
	b.Write(le.AppendUint32(nil, 16))
	b.Write(le.AppendUint16(nil, 1)) // PCM
	b.Write(le.AppendUint16(nil, uint16(nch)))
	b.Write(le.AppendUint32(nil, uint32(rate)))
	b.Write(le.AppendUint32(nil, uint32(rate*nch*2)))
	b.Write(le.AppendUint16(nil, uint16(nch*2)))
	b.Write(le.AppendUint16(nil, 16))
	b.WriteString("data")
	b.Write(le.AppendUint32(nil, uint32(data)))
	for _, v := range vals {
		b.Write(le.AppendUint16(nil, uint16(int16(v))))
	}
	if err := os.WriteFile(path, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestGLF1Sender: the reference sender in testdata/glf1send turns a WAV
// into GLF1 frames that replay to the WAV's own records (README "The GLF1
// frame"). It builds the sender with the go tool, so it is skipped with -short.
func TestGLF1Sender(t *testing.T) {
	if testing.Short() {
		t.Skip("builds testdata/glf1send with the go tool")
	}
	dir := t.TempDir()
	cfg := writeFile(t, dir, "c.yaml", countsCfg)
	wav := filepath.Join(dir, "dc2.wav")
	writeWAV16(t, wav, 6, 10240, countSamples(3.2))
	frames := filepath.Join(dir, "dc2.glf1")
	cmd := exec.Command("go", "run", "../../testdata/glf1send", "-wav", wav, "-channels", "6", "-format", "s16le", "-per", "300", "-o", frames)
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("glf1send: %v\n%s", err, out)
	}
	want := replayOut(t, nil, "--config", cfg, wav)
	got := replayOut(t, nil, "--config", cfg, "--pcm", "s16le", "--framing", "glf1", frames)
	if got != want || want == "" {
		t.Errorf("GLF1 frames from the sender replay differently from the WAV:\n got %.200s\nwant %.200s", got, want)
	}
}
