#!/bin/sh
# Reliability run (not part of CI): 20 SIGKILLs of `gridloupe run` with 3 s
# telemetry over a real mosquitto (/usr/sbin/mosquitto), the store checked
# after every kill, then a clean stop; prints stored records, delivered
# messages and counted drops (README, Reliability). About two minutes.
set -eu
cd "$(dirname "$0")/.."
exec go test -tags killloop -count=1 -run '^TestSIGKILLLoop$' -v ./cmd/gridloupe
