#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# Installs, from Debian's packages, what weft needs to build, run and test.
# Already-installed packages are left alone; needs root (or sudo).
set -eu
PKGS="build-essential make pkg-config curl ca-certificates \
libglpk-dev glpk-utils libmicrohttpd-dev libjansson-dev libsqlite3-dev sqlite3 \
python3 python3-scipy python3-networkx coinor-clp"
PKGS="$PKGS nodejs $(command -v npm >/dev/null 2>&1 || echo npm)"  # make check-openapi: the OpenAPI validator (npm ci in tests/openapi); a nodejs that brings its own npm needs no npm package
PKGS="$PKGS chromium chromium-driver python3-selenium"  # make check-browser: the network map page in headless Chromium
PKGS="$PKGS libcurl4-openssl-dev groff-base"  # the client build/weft (libcurl); its man page check (groff)
PKGS="$PKGS prometheus python3-prometheus-client"  # make check-monitoring: a real Prometheus scrapes /metrics (own one on 127.0.0.1), promtool, an OpenMetrics parser
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
