#!/usr/bin/env bash
# tests/memory.sh — the relay's and the monitor's memory over a long 1 kHz run.
#
#   tests/memory.sh                      ten minutes (MINUTES=10)
#   MINUTES=2 tests/memory.sh            a shorter run
#   MAX_GROWTH_KIB=8192 tests/memory.sh  a looser limit (default 4096 KiB)
#   BIN=DIR tests/memory.sh              use DIR/impair and DIR/monitor, built before
#
# Builds cmd/impair and cmd/monitor into a temporary directory and runs, all
# on 127.0.0.1, the simulated rig of profiles/examples/checks/mem-1khz.yaml (a booster
# pump's pressure loop, 1 ms period): the rig controller, `impair run` with
# the loop's profile and --tap to `monitor run`, and the rig node sending a
# sample every millisecond. It reads VmRSS and VmHWM of the relay and the
# monitor from /proc/PID/status after a 10 s warm-up and at the end, prints
# a progress line every 30 s on stderr and the table on stdout, and exits
# non-zero when a process died or either RSS grew by more than
# MAX_GROWTH_KIB. Every process it started is stopped when it ends or is
# interrupted. Linux only (/proc).
#
# The rig is simulated: nothing moves. Pointing a relay at a real rig needs
# an e-stop independent of the link, low gains first, guards in place and
# the site's own machine-safety rules.
set -euo pipefail

root=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
minutes=${MINUTES:-10}
max_growth=${MAX_GROWTH_KIB:-4096}
warmup=10
progress_every=30

if ! total=$(awk -v m="$minutes" 'BEGIN { if (m !~ /^[0-9]+(\.[0-9]+)?$/ || m <= 0) exit 1; printf "%d", m * 60 + 0.5 }'); then
	echo "memory: MINUTES: want a number of minutes > 0, got \"$minutes\"" >&2
	exit 2
fi
if ((total <= warmup)); then
	echo "memory: MINUTES: want a run longer than the ${warmup} s warm-up, got $minutes min" >&2
	exit 2
fi
if ! [[ $max_growth =~ ^[0-9]+$ ]]; then
	echo "memory: MAX_GROWTH_KIB: want a whole number of KiB, got \"$max_growth\"" >&2
	exit 2
fi

work=$(mktemp -d -t rigwire-memory.XXXXXX)
pids=()
cleanup() {
	for p in "${pids[@]}"; do kill -TERM "$p" 2>/dev/null || true; done
	for p in "${pids[@]}"; do
		for _ in $(seq 50); do kill -0 "$p" 2>/dev/null || break; sleep 0.1; done
		kill -KILL "$p" 2>/dev/null || true
	done
	rm -rf "$work"
}
trap cleanup EXIT
trap 'exit 130' INT TERM HUP

# free_port prints a 127.0.0.1 UDP port no socket is bound to (ss, else a
# random one and hope).
free_port() {
	local p
	for _ in $(seq 100); do
		p=$((20000 + RANDOM % 40000))
		if ! command -v ss >/dev/null || ! ss -Hlun "sport = :$p" | grep -q .; then
			echo "$p"
			return
		fi
	done
	echo "memory: no free UDP port found" >&2
	exit 1
}

# status_kib PID FIELD prints FIELD (VmRSS, VmHWM) of /proc/PID/status in KiB.
status_kib() {
	awk -v f="$2:" '$1 == f { print $2 }' "/proc/$1/status"
}

mib() { awk -v k="$1" 'BEGIN { printf "%.1f", k / 1024 }'; }

# alive checks the started processes and names the one that died.
alive() {
	local name
	for name in controller relay monitor node; do
		if ! kill -0 "${pid[$name]}" 2>/dev/null; then
			echo "memory: the $name (pid ${pid[$name]}) died; its output:" >&2
			sed 's/^/  /' "$work/$name.log" | tail -20 >&2
			return 1
		fi
	done
}

fmt_dur() { printf '%dm%ds' $(($1 / 60)) $(($1 % 60)); }

cd "$root"
bin=${BIN:-}
if [[ -z $bin ]]; then
	bin=$work/bin
	echo "memory: building impair and monitor into $bin" >&2
	mkdir -p "$bin"
	go build -o "$bin/impair" ./cmd/impair
	go build -o "$bin/monitor" ./cmd/monitor
fi
for b in impair monitor; do
	if [[ ! -x $bin/$b ]]; then
		echo "memory: BIN: want a directory with impair and monitor in it, $bin/$b is not an executable" >&2
		exit 2
	fi
done

loop=profiles/examples/checks/mem-1khz.yaml
profile=profiles/examples/checks/mem-1khz.profile.yaml
ctl=127.0.0.1:$(free_port)
relay=127.0.0.1:$(free_port)
tap=127.0.0.1:$(free_port)

declare -A pid
"$bin/monitor" rig controller --loop "$loop" --listen "$ctl" >"$work/controller.log" 2>&1 &
pid[controller]=$!
pids+=("$!")
"$bin/monitor" run --loop "$loop" --listen "$tap" --metrics off --progress 0 \
	--summary "$work/summary.json" >"$work/monitor.log" 2>&1 &
pid[monitor]=$!
pids+=("$!")
"$bin/impair" run --profile "$profile" --listen "$relay" --controller "$ctl" --tap "$tap" \
	--metrics off >"$work/relay.log" 2>&1 &
pid[relay]=$!
pids+=("$!")
sleep 0.5 # the sockets open
"$bin/monitor" rig node --loop "$loop" --relay "$relay" --seed 7 >"$work/node.log" 2>&1 &
pid[node]=$!
pids+=("$!")
echo "memory: 1 kHz rig through the relay for $(fmt_dur "$total") (relay pid ${pid[relay]}, monitor pid ${pid[monitor]})" >&2

began=$SECONDS
sleep "$warmup"
alive
declare -A rss0 rss1 hwm
for name in relay monitor; do rss0[$name]=$(status_kib "${pid[$name]}" VmRSS); done

next=$progress_every
while elapsed=$((SECONDS - began)) && ((elapsed < total)); do
	sleep 1
	alive
	elapsed=$((SECONDS - began))
	if ((elapsed >= next && elapsed < total)); then
		echo "memory: $(fmt_dur "$elapsed") of $(fmt_dur "$total"), relay $(mib "$(status_kib "${pid[relay]}" VmRSS)") MiB, monitor $(mib "$(status_kib "${pid[monitor]}" VmRSS)") MiB" >&2
		next=$((next + progress_every))
	fi
done
for name in relay monitor; do
	rss1[$name]=$(status_kib "${pid[$name]}" VmRSS)
	hwm[$name]=$(status_kib "${pid[$name]}" VmHWM)
done

# Stop the node first so the monitor's summary counts the whole run.
kill -TERM "${pid[node]}"
wait "${pid[node]}" 2>/dev/null || true
sleep 0.2
kill -TERM "${pid[monitor]}" "${pid[relay]}" "${pid[controller]}"
status=0
for name in monitor relay controller; do
	if ! wait "${pid[$name]}"; then
		echo "memory: the $name exited non-zero on SIGTERM; its output:" >&2
		sed 's/^/  /' "$work/$name.log" | tail -20 >&2
		status=1
	fi
done
samples=$(grep -o '"samples": *[0-9]*' "$work/summary.json" | head -1 | grep -o '[0-9]*$' || echo "?")
late=$(grep -o 'late=[0-9]*' "$work/node.log" | tail -1 || true)
overruns=$(grep -o 'overruns=[0-9]*' "$work/node.log" | tail -1 || true)

printf '%-8s %14s %12s %11s %8s\n' process rss_start_kib rss_end_kib growth_kib hwm_kib
for name in relay monitor; do
	growth=$((rss1[$name] - rss0[$name]))
	printf '%-8s %14d %12d %11d %8d\n' "$name" "${rss0[$name]}" "${rss1[$name]}" "$growth" "${hwm[$name]}"
	if ((growth > max_growth)); then
		echo "memory: the $name's RSS grew by $growth KiB, more than MAX_GROWTH_KIB=$max_growth" >&2
		status=1
	fi
done
echo "memory: monitor samples=$samples over $(fmt_dur "$total") (1 per ms expected), node ${late:-late=?} ${overruns:-overruns=?}" >&2
exit $status
