#!/bin/bash
# open_time.sh LOG [RUNS]: how long `parch report LOG --format json` takes,
# and how long `parch watch --session LOG` takes to show every reading and
# the figures (the model row) in tmux at 200x50; RUNS of each, alternating,
# and the medians. Needs tmux and bc; PARCH names the binary (default:
# parch on the PATH). Issue 12 asks the dashboard for at most 1.5x the
# report.
set -eu
LOG=$1; RUNS=${2:-5}; P=${PARCH:-parch}
N=$($P report "$LOG" --format json 2>/dev/null | sed -n 's/^  "readings": \([0-9]*\),*$/\1/p')
[ -n "$N" ] || { echo "cannot read the number of readings of $LOG" >&2; exit 1; }
now() { date +%s.%N; }
reports=(); dashes=()
# A session of its own keeps the tmux server up between runs: its start is
# not the dashboard's.
tmux new-session -d -s parch-open-hold "sleep 3600" 2>/dev/null || true
trap 'tmux kill-session -t parch-open-hold 2>/dev/null || true' EXIT
for i in $(seq "$RUNS"); do
  s=$(now); $P report "$LOG" --format json >/dev/null 2>&1; e=$(now)
  reports+=("$(echo "$e - $s" | bc)")
  tmux kill-session -t parch-open-time 2>/dev/null || true
  s=$(now)
  tmux new-session -d -s parch-open-time -x 200 -y 50 "$P watch --session $LOG"
  # One tmux call per look, every 40 ms, the test in the shell itself:
  # looking more often took a third of a core from the dashboard (the
  # machine has two). The dashboard's time is therefore up to 40 ms long.
  for ((k = 0; k < 3000; k++)); do
    screen=$(tmux capture-pane -p -t parch-open-time 2>/dev/null || true)
    head=${screen%%$'\n'*}
    [[ $head == *" $N readings"* && $screen == *"model "* ]] && break
    sleep 0.04
  done
  e=$(now)
  dashes+=("$(echo "$e - $s" | bc)")
  tmux kill-session -t parch-open-time
done
median() { printf '%s\n' "$@" | sort -n | awk '{a[NR]=$1} END {print a[int((NR+1)/2)]}'; }
r=$(median "${reports[@]}"); d=$(median "${dashes[@]}")
echo "readings $N; report: ${reports[*]} s (median $r); dashboard: ${dashes[*]} s (median $d); ratio $(echo "scale=2; $d / $r" | bc)"
