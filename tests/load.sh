#!/usr/bin/env bash
# tests/load.sh — the relay's load bars, side by side with baseline forwarders.
#
#   tests/load.sh            full run (3 repetitions, about 5 minutes)
#   tests/load.sh --quick    one repetition, short trials (about a minute)
#   tests/load.sh --keep …   keep the trials' files (their directory is printed)
#
# Any other flag goes to the orchestrator (tests/load/loadrun; -h lists them),
# e.g. --json results.json, --phases rate, --targets relay,batch, --pin.
# Builds cmd/impair and the load tools into a temporary directory, measures on
# 127.0.0.1 only, prints progress on stderr and the tables on stdout, and stops
# every process it started when it ends or is interrupted. See tests/load/README.md.
set -euo pipefail

root=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
keep=0
args=()
for a in "$@"; do
	case $a in
	--keep) keep=1 ;;
	*) args+=("$a") ;;
	esac
done

work=$(mktemp -d -t rigwire-load.XXXXXX)
runner=""
cleanup() {
	if [[ -n $runner ]] && kill -0 "$runner" 2>/dev/null; then
		kill -TERM "$runner" 2>/dev/null || true
		for _ in $(seq 30); do kill -0 "$runner" 2>/dev/null || break; sleep 0.1; done
		kill -KILL "$runner" 2>/dev/null || true
	fi
	if ((keep)); then
		echo "trials kept in $work" >&2
	else
		rm -rf "$work"
	fi
}
trap cleanup EXIT
trap 'exit 130' INT TERM HUP

if ! command -v socat >/dev/null; then
	if [[ $(id -u) == 0 ]] && command -v apt-get >/dev/null; then
		echo "installing socat from Debian's archive (baseline forwarder)" >&2
		DEBIAN_FRONTEND=noninteractive apt-get install -y -q socat >/dev/null 2>&1 ||
			echo "could not install socat; it will be left out" >&2
	else
		echo "socat not installed (apt-get install socat); it will be left out" >&2
	fi
fi

cd "$root"
echo "building the load tools and the relay into $work/bin" >&2
mkdir -p "$work/bin"
go build -o "$work/bin/" ./tests/load/udpgen ./tests/load/udpsink ./tests/load/naivefwd \
	./tests/load/batchfwd ./tests/load/loadrun
if ! go build -o "$work/bin/impair" ./cmd/impair 2>"$work/impair-build.log"; then
	echo "cmd/impair does not build; measuring the baselines only:" >&2
	sed 's/^/  /' "$work/impair-build.log" | head -5 >&2
	rm -f "$work/bin/impair"
fi

"$work/bin/loadrun" -bin "$work/bin" -work "$work/trials" ${args[@]+"${args[@]}"} &
runner=$!
rc=0
wait "$runner" || rc=$?
runner=""
exit $rc
