#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# Starts weftd on demo.db, loads the invented demo network and keeps it running.
#
# usage: sh deploy/demo.sh path/to/weftd
#
# Run from the repository root (make demo does).  WEFT_PORT overrides the
# port (default 8470); the daemon listens on 127.0.0.1 only.  The daemon
# stays in the foreground: Ctrl-C stops it.  demo.db is kept between runs;
# each run imports the demo network again, which replaces the topology and
# the matrix "demo".
set -eu

if [ $# -ne 1 ]; then
	echo "usage: sh deploy/demo.sh path/to/weftd" >&2
	exit 2
fi
weftd=$1
port=${WEFT_PORT:-8470}
base="http://127.0.0.1:$port"
dir=$(dirname "$0")
net="$dir/demo/network.csv"

case $port in
''|*[!0-9]*) echo "demo: WEFT_PORT must be a number" >&2; exit 2 ;;
esac
if [ ! -x "$weftd" ]; then
	echo "demo: $weftd is not an executable; run make first" >&2
	exit 1
fi
if [ ! -r "$net" ]; then
	echo "demo: $net not found" >&2
	exit 1
fi
command -v curl >/dev/null 2>&1 || {
	echo "demo: curl is needed" >&2
	exit 1
}

# Refuse to talk to some other daemon that already holds the port.
if curl -s -o /dev/null --max-time 1 "$base/" 2>/dev/null; then
	echo "demo: something already answers on $base; set WEFT_PORT" >&2
	exit 1
fi

"$weftd" --db demo.db --listen "127.0.0.1:$port" &
pid=$!
# Stop the daemon when the script is interrupted or a step fails.
trap 'kill "$pid" 2>/dev/null; wait "$pid" 2>/dev/null; exit 130' INT TERM
trap 'kill "$pid" 2>/dev/null' EXIT

# Wait up to 10 s for GET /v1/health to answer 200.
tries=0
until [ "$(curl -s -o /dev/null -w '%{http_code}' --max-time 1 \
    "$base/v1/health" || true)" = 200 ]; do
	tries=$((tries + 1))
	if ! kill -0 "$pid" 2>/dev/null; then
		echo "demo: weftd exited during start-up" >&2
		exit 1
	fi
	if [ "$tries" -ge 50 ]; then
		echo "demo: weftd did not answer on $base/v1/health" >&2
		exit 1
	fi
	sleep 0.2
done
if ! kill -0 "$pid" 2>/dev/null; then
	echo "demo: weftd exited during start-up" >&2
	exit 1
fi

# Each call prints the reply body; -f turns an HTTP error into a failure.
call() {
	if ! out=$(curl -sS --max-time 30 -w '\n%{http_code}' "$@"); then
		echo "demo: request failed: $*" >&2
		exit 1
	fi
	code=$(printf '%s\n' "$out" | tail -n 1)
	body=$(printf '%s\n' "$out" | sed '$d')
	printf '%s\n' "$body"
	case $code in
	2??) ;;
	*) echo "demo: HTTP $code from: $*" >&2; exit 1 ;;
	esac
}

echo "demo: importing $net"
call -X POST --data-binary "@$net" -H 'Content-Type: text/csv' \
    "$base/v1/import?format=csv&matrix=demo"
echo "demo: setting the policy"
call -X PUT -H 'Content-Type: application/json' \
    --data '{"objective":"balance","headroom":0.9,"matrix":"demo"}' \
    "$base/v1/policy"

echo
echo "weft demo running (pid $pid). Open: $base/v1/plan"
echo "Ctrl-C stops it."

# From here the daemon's own exit status is the script's.
trap - EXIT
trap 'kill "$pid" 2>/dev/null' INT TERM
status=0
wait "$pid" || status=$?
# wait returns early when a trapped signal arrives: reap the daemon.
if kill -0 "$pid" 2>/dev/null; then
	wait "$pid" || status=$?
fi
exit "$status"
