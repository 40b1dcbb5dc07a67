#!/usr/bin/python3
"""The comparison peer: reads the benchmark WAV in chunks, takes a real FFT
of every fixed 2048-sample window (10 cycles at 50 Hz and 10.24 kHz, no
tracking), and writes per window one JSON line: per channel RMS, THD and the
magnitudes and phases of orders 1-50; per phase P, S, PF and DPF.
Usage: peer.py IN.wav OUT.jsonl"""
import json
import sys
import wave

import numpy as np

N, CYC = 2048, 10
NAMES = ["va", "vb", "vc", "ia", "ib", "ic"]
SCALE = np.array([0.0125] * 3 + [0.01] * 3)


def main():
    with wave.open(sys.argv[1], "rb") as w, open(sys.argv[2], "w") as out:
        nch, fs = w.getnchannels(), w.getframerate()
        k = np.arange(1, 51) * CYC
        t = 0
        while True:
            b = w.readframes(N)
            if len(b) < N * nch * 2:
                break
            x = np.frombuffer(b, dtype="<i2").reshape(N, nch).T * SCALE[:, None]
            X = np.fft.rfft(x, axis=1) * (np.sqrt(2) / N)
            H = X[:, k]
            mag = np.abs(H)
            ang = np.degrees(np.angle(H) - np.outer(np.angle(H[0, 0]), np.arange(1, 51)))
            rms = np.sqrt(np.mean(x * x, axis=1))
            thd = 100 * np.sqrt(np.maximum(rms**2 - mag[:, 0] ** 2, 0)) / mag[:, 0]
            rec = {"start_s": t / fs, "channels": {}, "phases": {}}
            for c, name in enumerate(NAMES):
                rec["channels"][name] = {
                    "rms": float(rms[c]), "thd_pct": float(thd[c]),
                    "harmonics": [{"h": h + 1, "rms": float(mag[c, h]), "phase_deg": float(ang[c, h])} for h in range(50)],
                }
            for p in range(3):
                v, i = x[p], x[p + 3]
                pw = float(np.mean(v * i))
                s = float(rms[p] * rms[p + 3])
                p1 = float(np.real(H[p, 0] * np.conj(H[p + 3, 0])))
                s1 = float(mag[p, 0] * mag[p + 3, 0])
                rec["phases"]["abc"[p]] = {"p_w": pw, "s_va": s, "pf": pw / s, "dpf": p1 / s1}
            out.write(json.dumps(rec))
            out.write("\n")
            t += N


if __name__ == "__main__":
    main()
