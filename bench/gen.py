#!/usr/bin/python3
"""Write the benchmark recording: six channels (va, vb, vc, ia, ib, ic) of an
invented drive cabinet (North Weir DC-2 style: 230 V, six-pulse currents) at
10.24 kHz, 16-bit PCM WAV, at 50.02 Hz (off nominal, so windows are tracked).
Usage: gen.py OUT.wav [SECONDS]"""
import sys
import wave

import numpy as np

FS, F = 10240, 50.02
VSCALE, ISCALE = 0.0125, 0.01  # engineering units per count (bench.yaml)


def main():
    out = sys.argv[1]
    seconds = float(sys.argv[2]) if len(sys.argv) > 2 else 600.0
    n_total = int(round(seconds * FS))
    rng = np.random.default_rng(12)
    vh = {1: 230.0, 5: 4.6, 7: 3.2, 11: 1.1, 13: 0.8}
    ih = {1: 128.0, 5: 25.0, 7: 11.0, 11: 6.0, 13: 4.0, 17: 2.0, 19: 1.5, 23: 1.0, 25: 0.8}
    with wave.open(out, "wb") as w:
        w.setnchannels(6)
        w.setsampwidth(2)
        w.setframerate(FS)
        chunk = FS
        for start in range(0, n_total, chunk):
            n = np.arange(start, min(n_total, start + chunk))
            th = 2 * np.pi * F * n / FS
            cols = []
            for kind, table, scale, lag in (("v", vh, VSCALE, 0.0), ("i", ih, ISCALE, -0.3)):
                for ph in range(3):
                    x = np.zeros(len(n))
                    for h, rms in table.items():
                        x += np.sqrt(2) * rms * np.cos(h * (th - 2 * np.pi / 3 * ph + lag) + 0.1 * h)
                    x += rng.normal(0, 0.001 * table[1], len(n))
                    cols.append(np.clip(np.round(x / scale), -32768, 32767).astype("<i2"))
            w.writeframes(np.stack(cols, axis=1).tobytes())


if __name__ == "__main__":
    main()
