#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# Installs, from Debian's packages, what weft needs to build, run and test.
# Already-installed packages are left alone; needs root (or sudo).
set -eu
PKGS="build-essential make pkg-config curl ca-certificates \
libglpk-dev glpk-utils libmicrohttpd-dev libjansson-dev libsqlite3-dev sqlite3 \
python3 python3-scipy python3-networkx coinor-clp"
PKGS="$PKGS openssl"  # make check-security: a self-signed certificate for the HTTPS test (curl --cacert)
PKGS="$PKGS libsystemd-dev systemd"  # weftd: readiness and watchdog (sd_notify); make check-service: systemd-analyze verify and security
PKGS="$PKGS nodejs $(command -v npm >/dev/null 2>&1 || echo npm)"  # make check-openapi: the OpenAPI validator (npm ci in tests/openapi); a nodejs that brings its own npm needs no npm package
PKGS="$PKGS chromium chromium-driver python3-selenium"  # make check-browser: the network map page in headless Chromium
PKGS="$PKGS libcurl4-openssl-dev groff-base"  # the client build/weft (libcurl); its man page check (groff)
PKGS="$PKGS prometheus python3-prometheus-client"  # make check-monitoring: a real Prometheus scrapes /metrics (own one on 127.0.0.1), promtool, an OpenMetrics parser
PKGS="$PKGS clang libclang-rt-14-dev valgrind"  # make fuzz, fuzz-ci (libFuzzer with ASan and UBSan, clang's runtimes); make check-valgrind
PKGS="$PKGS zlib1g-dev"  # make (weftd, -lz): gzip and deflate replies (api/compress.c)
PKGS="$PKGS openmpi-bin libopenmpi-dev"  # make mpi, check-mpi, bench: build/weft-mpisweep (mpicc) and mpirun
case "${1:-}" in --load) PKGS="$PKGS wrk nginx" ;; esac  # make load only (sh deploy/install-deps.sh --load): wrk, and nginx for comparison (the load test runs its own on 127.0.0.1; where systemd runs, Debian also starts the packaged service)
missing=""
for p in $PKGS; do
	dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "ok installed" ||
	    missing="$missing $p"
done
[ -z "$missing" ] && exit 0
SUDO=""
[ "$(id -u)" -eq 0 ] || SUDO=sudo
echo "installing:$missing"
$SUDO apt-get update -q
DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -q --no-install-recommends $missing
