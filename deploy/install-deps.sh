#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# Installs, from Debian's packages, what weft needs to build, run and test.
# Already-installed packages are left alone; needs root (or sudo).
set -eu
PKGS="build-essential make pkg-config curl ca-certificates \
libglpk-dev glpk-utils libmicrohttpd-dev libjansson-dev libsqlite3-dev sqlite3 \
python3 python3-scipy python3-networkx coinor-clp"
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
