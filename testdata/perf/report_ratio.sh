#!/bin/bash
# report_ratio.sh CSV DRY_MASS EQUILIBRIUM [RUNS]: `parch report CSV --format
# json` against the scipy peer (peer_report.py) on the same file, RUNS of
# each (default 7), alternating, on the same machine in the same run; prints
# each one's wall time and peak memory (GNU time) and the medians' ratio.
# Issue 12 asks at most 0.15 of the peer's time and under 150 MB.
set -eu
CSV=$1; DRY=$2; XE=$3; RUNS=${4:-7}; P=${PARCH:-parch}
PY=${PYTHON:-/usr/bin/python3}
here=$(dirname "$0")
t=$(mktemp)
peer=(); parch=(); pmem=(); mem=()
for i in $(seq "$RUNS"); do
  /usr/bin/time -f "%e %M" -o "$t" "$PY" "$here/peer_report.py" "$CSV" "$DRY" "$XE" >/dev/null
  read -r s m <"$t"; peer+=("$s"); pmem+=("$m")
  /usr/bin/time -f "%e %M" -o "$t" "$P" report "$CSV" --format json --dry-mass "$DRY" --equilibrium "$XE" >/dev/null 2>&1
  read -r s m <"$t"; parch+=("$s"); mem+=("$m")
done
rm -f "$t"
median() { printf '%s\n' "$@" | sort -n | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}'; }
a=$(median "${parch[@]}"); b=$(median "${peer[@]}")
echo "parch: ${parch[*]} s, peak $(median "${mem[@]}") KB (median)"
echo "peer:  ${peer[*]} s, peak $(median "${pmem[@]}") KB (median)"
echo "median parch $a s, peer $b s: ratio $(echo "scale=3; $a / $b" | bc)"
