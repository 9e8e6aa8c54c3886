#!/bin/sh
# Rewrite the expected output of CLI cases from the current program.
# Usage: tools/update-cli-golden.sh [CASE...]   (default: every case)
# Review the diff (git diff tests/cli) before committing: a golden file is a
# claim that the output is right.
set -eu
cd "$(dirname "$0")/.."
make -s build/sillwatch
prog=$(pwd)/build/sillwatch
[ $# -gt 0 ] || set -- $(ls tests/cli)
for name in "$@"; do
    dir=tests/cli/$name
    [ -f "$dir/cmd" ] || { echo "no case $dir/cmd" >&2; exit 2; }
    tmp=$(mktemp -d)
    ( cd "$dir" && LC_ALL=C SW="$prog" TMP="$tmp" sh ./cmd >stdout 2>stderr </dev/null; echo $? >status ) || true
    rm -rf "$tmp"
    echo "updated $dir (exit $(cat "$dir/status"))"
done
