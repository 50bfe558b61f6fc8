#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# One command for a fresh Debian machine: install what is missing, build
# weftd, start it on demo.db with the demo network loaded, print the URL.
set -eu
cd "$(dirname "$0")/.."
sh deploy/install-deps.sh
make
exec sh deploy/demo.sh build/weftd
