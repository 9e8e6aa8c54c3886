#!/bin/sh
# Check that the build and test dependencies are present; install the missing
# ones from Debian's packages through tools/install-deps.sh.
# Called by the Makefile before the first compile.
set -eu
here=$(dirname "$0")
missing=

have_header() { printf '#include <%s>\n' "$1" | ${CC:-cc} -E -x c - >/dev/null 2>&1; }

command -v ${CC:-cc} >/dev/null 2>&1 || missing="$missing build-essential"
command -v pkg-config >/dev/null 2>&1 || missing="$missing pkg-config"
have_header csv.h || missing="$missing libcsv-dev"
have_header gsl/gsl_roots.h || missing="$missing libgsl-dev"
# cmocka.h needs these three first.
printf '#include <stdarg.h>\n#include <stddef.h>\n#include <setjmp.h>\n#include <cmocka.h>\n' \
    | ${CC:-cc} -E -x c - >/dev/null 2>&1 || missing="$missing libcmocka-dev"
have_header ini.h || missing="$missing libinih-dev"
# SHA-256 of the site file in threshold tables.
have_header nettle/sha2.h || missing="$missing nettle-dev"
# JSON output (point/check --format json, run/screen --json).
have_header jansson.h || missing="$missing libjansson-dev"
# CF-NetCDF level series (format = netcdf); the tests write such files.
have_header netcdf.h || missing="$missing libnetcdf-dev"
# The tests: the report's well-formedness (xmllint), the browser test's
# image reader (libpng).
command -v xmllint >/dev/null 2>&1 || missing="$missing libxml2-utils"
# The print test reads the report's PDF back (pdfinfo, pdftotext, pdftoppm).
command -v pdfinfo >/dev/null 2>&1 || missing="$missing poppler-utils"
have_header png.h || missing="$missing libpng-dev"
# The tests: the manual pages rendered by man -l (man-db, groff-base).
command -v man >/dev/null 2>&1 || missing="$missing man-db"
command -v groff >/dev/null 2>&1 || missing="$missing groff-base"
# The tests: JSON outputs parsed and queried with jq.
command -v jq >/dev/null 2>&1 || missing="$missing jq"
# The tests: tools/fleet-parallel.sh runs sites with GNU parallel, and the
# fleet scripts are checked with shellcheck.
command -v parallel >/dev/null 2>&1 || missing="$missing parallel"
command -v shellcheck >/dev/null 2>&1 || missing="$missing shellcheck"
# The tz database: zone names in site files and the tests' zones.
[ -f "${TZDIR:-/usr/share/zoneinfo}/Europe/Berlin" ] || missing="$missing tzdata"

if [ -n "$missing" ]; then
    echo "check-deps: missing:$missing"
    # shellcheck disable=SC2086
    "$here/install-deps.sh" $missing
fi
