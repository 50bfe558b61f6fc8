#!/bin/sh
# SPDX-License-Identifier: GPL-3.0-or-later
# One command for a fresh Debian machine: install what is missing, build
# weft and run the whole test suite (unit, integration, reference checks).
set -eu
cd "$(dirname "$0")/.."
sh deploy/install-deps.sh
make check "$@"
