#!/bin/sh
# Run every unit test program and every CLI case; print one closing line
# "N passed, N failed".  Usage: tools/run-tests.sh BUILD_DIR UNIT_BINARY...
# SW_WRAPPER, if set, prefixes every run of the program (valgrind, say).
set -u
build=$1; shift
passed=0; failed=0; skipped=0

for t in "$@"; do
    if ${SW_WRAPPER:-} "$t"; then passed=$((passed + 1)); else
        echo "FAILED: $t"; failed=$((failed + 1)); fi
done

# CLI cases: tests/cli/NAME/{cmd,stdout,stderr,status}, and the bad-input
# corpus tests/bad/NAME/ in the same format (a folder without `cmd`, such as
# tests/bad/common, holds shared inputs); see DEVELOPERS.md.  A case with
# a `skip-if` script is skipped, and reported so, when that script exits 0
# (it prints why): for tests that need what a machine may lack (a browser).
builddir=$(cd "$build" && pwd)
prog=$builddir/sillwatch
for dir in tests/cli/*/ tests/bad/*/; do
    [ -f "$dir/cmd" ] || continue
    name=$(basename "$(dirname "$dir")")/$(basename "$dir")
    if [ -f "$dir/skip-if" ] && why=$(cd "$dir" && sh ./skip-if 2>&1); then
        echo "SKIPPED: $name: $why"
        skipped=$((skipped + 1))
        continue
    fi
    out=$(mktemp -d)   # what the case printed
    work=$(mktemp -d)  # the case's own scratch folder, $TMP
    ( cd "$dir" && LC_ALL=C SW="${SW_WRAPPER:+$SW_WRAPPER }$prog" TMP="$work" \
        BUILD="$builddir" \
        sh ./cmd >"$out/stdout" 2>"$out/stderr" </dev/null; echo $? >"$out/status" )
    ok=1
    for f in stdout stderr status; do
        if ! cmp -s "$dir/$f" "$out/$f"; then
            [ $ok = 1 ] && echo "FAILED: $name"
            ok=0
            diff -u "$dir/$f" "$out/$f" | head -n 40 | sed 's/^/    /'
        fi
    done
    if [ $ok = 1 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); fi
    rm -rf "$out" "$work"
done

echo "$passed passed, $failed failed, $skipped skipped"
[ "$failed" = 0 ]
