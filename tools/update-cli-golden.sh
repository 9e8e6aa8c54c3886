#!/bin/sh
# Rewrite the expected output (stdout, stderr, status) of CLI cases from the
# current program.
# Usage: tools/update-cli-golden.sh [CASE...]   (default: every case)
#   CASE is the name of a folder in tests/cli, or the path of a case folder
#   (tests/bad/csv_ragged_short), or of a folder of cases (tests/bad: every
#   case in it).
# Review the diff (git diff tests/cli tests/bad) before committing: a golden
# file is a claim that the output is right.
set -eu
cd "$(dirname "$0")/.."
make -s build/sillwatch build/tests/pngstat
prog=$(pwd)/build/sillwatch
[ $# -gt 0 ] || set -- $(ls tests/cli)
cases=
for arg in "$@"; do
    arg=${arg%/}
    if [ -f "tests/cli/$arg/cmd" ]; then
        cases="$cases tests/cli/$arg"
    elif [ -f "$arg/cmd" ]; then
        cases="$cases $arg"
    elif [ -d "$arg" ]; then
        for d in "$arg"/*/; do
            [ -f "$d/cmd" ] && cases="$cases ${d%/}"
        done
    else
        echo "no case $arg (tests/cli/$arg/cmd or $arg/cmd)" >&2
        exit 2
    fi
done
for dir in $cases; do
    tmp=$(mktemp -d)   # the case's scratch folder, $TMP, as in run-tests.sh
    ( cd "$dir" && LC_ALL=C SW="$prog" TMP="$tmp" BUILD="$(dirname "$prog")" \
        sh ./cmd >stdout 2>stderr </dev/null; echo $? >status ) || true
    rm -rf "$tmp"
    echo "updated $dir (exit $(cat "$dir/status"))"
done
