#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# Runs the libFuzzer targets built by `make fuzz-build` (see the Makefile).
#
#   sh tests/fuzz/run.sh [--replay] BUILD SECONDS RSS_MB TARGET...
#
# For each target: with --replay, first runs every input kept under
# tests/fuzz/regress/<target>/ and the seeds under tests/fuzz/corpus/<target>/
# once (each must pass); then fuzzes for SECONDS (0: no fuzzing) on a copy of
# the seed corpus in BUILD/corpus/<target>/, so the tree is never written to.
# New crashes land in BUILD/artifacts/<target>/.  Prints one summary line per
# target with libFuzzer's execution count; exits 1 if any target failed.
set -u
replay=0
if [ "${1:-}" = "--replay" ]; then
	replay=1
	shift
fi
build=$1 seconds=$2 rss=$3
shift 3
here=$(cd "$(dirname "$0")" && pwd)
# UBSan findings end the run like ASan's do, so libFuzzer keeps the input.
UBSAN_OPTIONS=${UBSAN_OPTIONS:-halt_on_error=1:print_stacktrace=1}
ASAN_OPTIONS=${ASAN_OPTIONS:-detect_leaks=1}
export UBSAN_OPTIONS ASAN_OPTIONS
summary=""
fail=0
for t in "$@"; do
	bin=$build/fuzz/fuzz_$t
	log=$build/logs/fuzz_$t.log
	mkdir -p "$build/logs" "$build/artifacts/$t"
	: > "$log"
	status=ok
	if [ "$replay" -eq 1 ]; then
		for dir in "$here/regress/$t" "$here/corpus/$t"; do
			[ -d "$dir" ] || continue
			files=$(find "$dir" -type f | sort)
			[ -n "$files" ] || continue
			# shellcheck disable=SC2086
			if ! "$bin" -rss_limit_mb="$rss" -timeout=30 $files \
			    >> "$log" 2>&1; then
				status="FAILED replaying $dir"
				break
			fi
		done
	fi
	runs="-"
	if [ "$status" = ok ] && [ "$seconds" -gt 0 ]; then
		work=$build/corpus/$t
		rm -rf "$work"
		mkdir -p "$work"
		cp "$here/corpus/$t"/* "$work"/ 2>/dev/null
		if ! "$bin" -max_total_time="$seconds" -rss_limit_mb="$rss" \
		    -timeout=20 -print_final_stats=1 \
		    -artifact_prefix="$build/artifacts/$t/" "$work" \
		    >> "$log" 2>&1; then
			status="CRASH (see $log and $build/artifacts/$t/)"
		fi
		runs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$log" |
		    tail -n 1)
		[ -n "$runs" ] || runs=$(sed -n 's/^Done \([0-9]*\) runs.*/\1/p' \
		    "$log" | tail -n 1)
	fi
	[ "$status" = ok ] || fail=1
	summary="$summary$(printf '%-8s %12s executions in %ss  %s' "$t" \
	    "${runs:--}" "$seconds" "$status")
"
done
echo "== fuzz summary ($build)"
printf '%s' "$summary"
if [ "$fail" -ne 0 ]; then
	echo "A crashing input is in $build/artifacts/<target>/: fix the parser," \
	    "then keep the input under tests/fuzz/regress/<target>/."
	for t in "$@"; do
		grep -m 3 -E 'ERROR|runtime error|broken promise' \
		    "$build/logs/fuzz_$t.log" 2>/dev/null | sed "s/^/$t: /"
	done
fi
exit "$fail"
