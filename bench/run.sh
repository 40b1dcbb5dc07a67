#!/bin/bash
# Replay against a numpy FFT-per-window peer (not part of CI).
# Usage: bash bench/run.sh [SECONDS]   (default 600: ten minutes)
# Generates a six-channel 10.24 kHz 16-bit WAV (bench/gen.py), then runs
# `gridloupe replay --interval 200ms --format jsonl` (all 50 orders), the
# same command of the offline executable (gridloupe-offline, no network,
# store or MQTT) and bench/peer.py alternately three times each, and prints
# wall time, CPU time (user + system) and peak RSS of every run, the medians
# and the ratios.
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
work=${BENCH_DIR:-/tmp/gridloupe-bench}
secs=${1:-600}
py=/usr/bin/python3 # Debian's python3-numpy lives here
mkdir -p "$work"
wav=$work/bench-$secs.wav
[[ -s $wav ]] || { echo "generating $wav"; "$py" "$here/gen.py" "$wav" "$secs"; }
(cd "$here/.." && CGO_ENABLED=0 go build -o "$work/gridloupe" ./cmd/gridloupe &&
  CGO_ENABLED=0 go build -o "$work/gridloupe-offline" ./cmd/gridloupe-offline)
measure() { # name, command...: appends "name wall cpu rss_kib"
  local name=$1; shift
  /usr/bin/time -f "%e %U %S %M" -o "$work/time.txt" "$@" >/dev/null 2>"$work/err.txt" || { cat "$work/err.txt"; exit 1; }
  read -r wall user sys rss <"$work/time.txt"
  echo "$name $wall $(echo "$user + $sys" | bc) $rss" | tee -a "$work/results.txt"
}
: >"$work/results.txt"
echo "run wall_s cpu_s peak_rss_kib"
for i in 1 2 3; do
  measure gridloupe "$work/gridloupe" replay --config "$here/bench.yaml" --interval 200ms --format jsonl "$wav"
  measure offline "$work/gridloupe-offline" --config "$here/bench.yaml" --interval 200ms --format jsonl "$wav"
  measure peer "$py" "$here/peer.py" "$wav" "$work/peer.jsonl"
done
"$py" - "$work/results.txt" <<'PY'
import statistics, sys
rows = [l.split() for l in open(sys.argv[1])]
med = {}
for name in ("gridloupe", "offline", "peer"):
    r = [list(map(float, x[1:])) for x in rows if x[0] == name]
    med[name] = [statistics.median(c) for c in zip(*r)]
    print(f"median {name}: wall {med[name][0]:.2f} s, cpu {med[name][1]:.2f} s, peak RSS {med[name][2]/1024:.1f} MiB")
p = med["peer"]
for name in ("gridloupe", "offline"):
    g = med[name]
    print(f"{name} vs peer: {p[0]/g[0]:.2f}x faster (wall), {p[1]/g[1]:.2f}x less CPU, {g[2]/p[2]:.3f} of the peer's memory")
PY
