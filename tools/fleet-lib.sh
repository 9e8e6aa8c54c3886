# shellcheck shell=bash
# What tools/fleet-parallel.sh and tools/fleet-slurm.sh share (sourced by
# both, never run): the site list, each site's name (its file's stem, the
# name of its output folder OUT/NAME), and the merge of the sites that ran
# into OUT/fleet.csv with `sillwatch fleet`.
#
# Exit codes of the scripts: 0 and 1 as `sillwatch fleet` (every gate of
# every site held its margin / some gate did not), 2 for a wrong command
# line, 9 when some site did not run to a verdict (its run failed, or the
# job did not finish): fleet.csv then holds the sites that did, and
# OUT/failed-sites.txt lists the others; any other code is that of
# `sillwatch fleet` itself.

# Names in OUT that the scripts write themselves: no site may take them.
FLEET_RESERVED=(fleet.csv failed-sites.txt jobs.tsv sites.txt logs status)

FLEET_SITES=()  # the site files as given
FLEET_ABS=()    # the same, absolute (every host sees the same paths)
FLEET_STEMS=()  # each site's name
FLEET_OUT=      # the output folder, absolute

fleet_die() {
    echo "$FLEET_PROG: $*" >&2
    exit 2
}

# The site name of a site file: its file name without the last extension
# ("sites/north.ini" gives "north"; "a.b.ini" gives "a.b").
fleet_stem() {
    local base=${1##*/}
    local stem=${base%.*}
    [[ -n $stem ]] || stem=$base
    printf '%s\n' "$stem"
}

# Add the site files listed in FILE (one per line; blank lines and lines
# starting with # are skipped) to FLEET_SITES.
fleet_read_list() {
    local line
    [[ -f $1 && -r $1 ]] || fleet_die "$1: cannot read the list of site files"
    while IFS= read -r line || [[ -n $line ]]; do
        [[ -z $line || $line == \#* ]] && continue
        FLEET_SITES+=("$line")
    done < "$1"
}

# Check the sites and the output folder OUT, make OUT, and fill FLEET_OUT,
# FLEET_ABS and FLEET_STEMS.  Two sites of one name, a name the scripts
# use themselves, a missing site file: exit 2 before anything runs.  The
# fleet table of an earlier run is removed: once the runs start it would
# no longer match the folders.
fleet_prepare() {
    local out=$1 s stem dir r
    local -A seen=()
    [[ -n $out ]] || fleet_die "give the output folder with -o OUT"
    ((${#FLEET_SITES[@]} > 0)) || fleet_die "give the site files (or --list FILE)"
    for s in "${FLEET_SITES[@]}"; do
        [[ $s != *$'\n'* ]] || fleet_die "a site file's name holds a line break"
        [[ -f $s && -r $s ]] || fleet_die "$s: no such site file (or not readable)"
        stem=$(fleet_stem "$s")
        [[ $stem != . && $stem != .. ]] ||
            fleet_die "$s: the file's name leaves no site name: rename it"
        for r in "${FLEET_RESERVED[@]}"; do
            [[ $stem != "$r" ]] ||
                fleet_die "$s: the site name '$stem' is one of the scripts' own files in OUT: rename the site file"
        done
        [[ -z ${seen[$stem]+x} ]] ||
            fleet_die "$s: the site name '$stem' is also that of ${seen[$stem]}: each site needs its own name (its outputs go to OUT/$stem)"
        seen[$stem]=$s
        dir=$(cd -- "$(dirname -- "$s")" && pwd -P) || exit 2
        FLEET_ABS+=("$dir/${s##*/}")
        FLEET_STEMS+=("$stem")
    done
    mkdir -p -- "$out" || exit 5
    FLEET_OUT=$(cd -- "$out" && pwd -P) || exit 5
    for r in fleet.csv failed-sites.txt; do
        [[ ! -f $FLEET_OUT/$r ]] || rm -f -- "$FLEET_OUT/$r"
    done
}

# Why a site did not run to a verdict, from its exit code ("" when the job
# left none).
fleet_reason() {
    case $1 in
    '') echo "did not finish (no exit status)" ;;
    2) echo "the run's command line was refused (exit 2)" ;;
    3) echo "the site file is unreadable or invalid (exit 3)" ;;
    4) echo "a level file is unreadable or invalid (exit 4)" ;;
    5) echo "an output could not be written (exit 5)" ;;
    6) echo "a numerical method failed (exit 6)" ;;
    7) echo "out of memory (exit 7)" ;;
    8) echo "internal error (exit 8)" ;;
    127) echo "sillwatch was not found on the host (exit 127)" ;;
    130 | 143) echo "interrupted (exit $1)" ;;
    255) echo "the remote login failed (exit 255)" ;;
    *) echo "exit $1" ;;
    esac
}

# fleet_merge SILLWATCH CODE...: one exit code per site, in the order of
# FLEET_STEMS ("" where the job left none).  The sites that ran to a
# verdict (0 or 1) go into OUT/fleet.csv through `sillwatch fleet`; the
# others are listed on standard error and in OUT/failed-sites.txt (site,
# exit, site file; tab-separated).  Returns the scripts' exit code (see
# the top).
fleet_merge() {
    local sw=$1 i code rc failed=0
    local list=$FLEET_OUT/failed-sites.txt
    local -a ok=()
    shift
    for ((i = 0; i < ${#FLEET_STEMS[@]}; i++)); do
        code=${1-}
        (($# > 0)) && shift
        if [[ $code == 0 || $code == 1 ]]; then
            ok+=("$FLEET_OUT/${FLEET_STEMS[i]}")
            continue
        fi
        ((failed++ == 0)) && printf 'site\texit\tsite_file\n' > "$list"
        printf '%s\t%s\t%s\n' "${FLEET_STEMS[i]}" "${code:-none}" \
            "${FLEET_ABS[i]}" >> "$list"
        echo "$FLEET_PROG: left out of the fleet table: ${FLEET_STEMS[i]}" \
            "(${FLEET_ABS[i]}): $(fleet_reason "$code")" >&2
    done
    if ((${#ok[@]} == 0)); then
        echo "$FLEET_PROG: no site ran to a verdict; no fleet table written" \
            "(see $list)" >&2
        return 9
    fi
    "$sw" fleet "${ok[@]}" -o "$FLEET_OUT/fleet.csv"
    rc=$?
    if ((failed > 0 && rc <= 1)); then
        echo "$FLEET_PROG: $failed of ${#FLEET_STEMS[@]} sites left out of" \
            "$FLEET_OUT/fleet.csv: listed in $list" >&2
        return 9
    fi
    return "$rc"
}
