#!/bin/bash
# Many sites on a Slurm cluster: `submit` sends a job array, one task per
# site file (`sillwatch run`, outputs in OUT/NAME/), and a merge job that
# waits for the whole array (--dependency=afterany) and runs
# `sillwatch fleet` over the sites that ran, into OUT/fleet.csv.  The
# same file is the jobs' batch script (`task`, `merge`).  See the README,
# "Many sites and many machines".  Not run on a cluster by its authors:
# `make check` runs its task and merge steps on one machine through a
# stand-in for sbatch (tests/cli/fleet_slurm_standin).  The results are
# hydrostatic screening only, as every output of sillwatch.
set -u
FLEET_PROG=fleet-slurm

usage() {
    cat <<'EOF'
Usage: tools/fleet-slurm.sh submit -o OUT [--sillwatch PATH] [--max-running N]
                           [--sbatch OPTION]... (SITE.ini... | --list FILE)
                           [-- RUN-OPTION...]
Submit a Slurm job array, one task per site file ('sillwatch run', outputs
in OUT/NAME/, NAME: the site file's name without its extension), and a
job that waits for the whole array, then runs 'sillwatch fleet' over the
sites that ran, into OUT/fleet.csv.

  -o OUT            the output folder (made if missing), on a file system
                    every node sees, as the site and level files
  --sillwatch PATH  the program on the nodes (default: sillwatch, or
                    $SILLWATCH when set)
  --max-running N   at most N tasks at a time (sbatch --array=1-M%N)
  --sbatch OPTION   passed to both sbatch calls (--account=..., --time=...,
                    --partition=...); repeatable
  --list FILE       read the site files from FILE, one per line (blank
                    lines and lines starting with # skipped)
  --                the rest goes to every 'sillwatch run'

Writes OUT/sites.txt (the site files, one per task), OUT/status/NAME (each
task's exit code), OUT/logs/ (the jobs' output), OUT/fleet.csv, and
OUT/failed-sites.txt when some site did not run to a verdict.  The merge
job exits 0 every gate held its margin, 1 some gate did not, 9 some site
did not run to a verdict (the table holds the others).
Caution: hydrostatic screening only; not a structural assessment. Defer
to local codes and a licensed engineer before acting on the results.
EOF
}

# The jobs run a copy of this file that Slurm keeps, so they are told
# where the tools folder is (the shared file system) and source it there.
load_lib() {
    # shellcheck source=tools/fleet-lib.sh
    . "$1/fleet-lib.sh" || exit 2
}

submit() {
    local here out='' sw=${SILLWATCH:-sillwatch} max='' jid mid n
    local -a sb=() run_opts=()
    here=$(cd -- "$(dirname -- "${BASH_SOURCE[0]}")" && pwd -P) || exit 2
    load_lib "$here"
    while (($# > 0)); do
        case $1 in
        -o | --sillwatch | --max-running | --sbatch | --list)
            (($# >= 2)) || fleet_die "option '$1' needs a value"
            case $1 in
            -o) out=$2 ;;
            --sillwatch) sw=$2 ;;
            --max-running) max=$2 ;;
            --sbatch) sb+=("$2") ;;
            --list) fleet_read_list "$2" ;;
            esac
            shift 2 ;;
        --) shift; run_opts=("$@"); break ;;
        -*) fleet_die "unknown option '$1' (try --help)" ;;
        *) FLEET_SITES+=("$1"); shift ;;
        esac
    done
    [[ -z $max || $max =~ ^[1-9][0-9]*$ ]] ||
        fleet_die "--max-running takes a whole number of tasks, not '$max'"
    command -v sbatch >/dev/null 2>&1 ||
        fleet_die "sbatch not found: submit from a Slurm login node"
    fleet_prepare "$out"
    n=${#FLEET_ABS[@]}
    mkdir -p -- "$FLEET_OUT/logs" "$FLEET_OUT/status" || exit 5
    rm -f -- "$FLEET_OUT/status/"* # the statuses of an earlier submission
    printf '%s\n' "${FLEET_ABS[@]}" > "$FLEET_OUT/sites.txt" || exit 5

    jid=$(sbatch --parsable --job-name=sillwatch-sites \
        --array="1-$n${max:+%$max}" --output="$FLEET_OUT/logs/site-%a.log" \
        "${sb[@]}" "$here/fleet-slurm.sh" task "$FLEET_OUT" "$here" "$sw" \
        "${run_opts[@]}") || fleet_die "sbatch refused the array job"
    jid=${jid%%;*} # "ID;CLUSTER" on a federation
    mid=$(sbatch --parsable --job-name=sillwatch-fleet \
        --dependency="afterany:$jid" --output="$FLEET_OUT/logs/merge.log" \
        "${sb[@]}" "$here/fleet-slurm.sh" merge "$FLEET_OUT" "$here" "$sw") ||
        fleet_die "sbatch refused the merge job (the array job $jid is queued: scancel $jid)"
    mid=${mid%%;*}
    echo "submitted job array $jid ($n sites) and merge job $mid;"
    echo "the fleet table will be $FLEET_OUT/fleet.csv (log: $FLEET_OUT/logs/merge.log)"
}

# One array task: the site on line SLURM_ARRAY_TASK_ID of OUT/sites.txt.
task() {
    local out=$1 tools=$2 sw=$3 i site stem rc
    shift 3
    load_lib "$tools"
    i=${SLURM_ARRAY_TASK_ID:-}
    [[ $i =~ ^[1-9][0-9]*$ ]] || fleet_die "task: not in a Slurm array task (SLURM_ARRAY_TASK_ID='$i')"
    site=$(sed -n "${i}p" "$out/sites.txt")
    [[ -n $site ]] || fleet_die "task $i: no line $i in $out/sites.txt"
    stem=$(fleet_stem "$site")
    "$sw" run "$site" -o "$out/$stem" -q "$@"
    rc=$?
    # the exit code for the merge, put in place whole
    printf '%s\n' "$rc" > "$out/status/.$stem.tmp" &&
        mv -f -- "$out/status/.$stem.tmp" "$out/status/$stem"
    # a verdict (0: held, 1: below the margin) is a finished task
    ((rc <= 1)) && exit 0
    exit "$rc"
}

# The merge job, after every task of the array has ended in any state.
merge() {
    local out=$1 tools=$2 sw=$3 s
    local -a codes=()
    load_lib "$tools"
    FLEET_OUT=$out
    mapfile -t FLEET_ABS < "$out/sites.txt" || exit 2
    for s in "${FLEET_ABS[@]}"; do
        FLEET_STEMS+=("$(fleet_stem "$s")")
        codes+=("$(cat -- "$out/status/${FLEET_STEMS[-1]}" 2>/dev/null)")
    done
    fleet_merge "$sw" "${codes[@]}"
    exit $?
}

case ${1-} in
submit) shift; submit "$@" ;;
task | merge)
    (($# >= 4)) || { echo "$FLEET_PROG: $1 OUT TOOLS SILLWATCH: missing arguments" >&2; exit 2; }
    mode=$1; shift; "$mode" "$@" ;;
-h | --help) usage ;;
*) usage >&2; exit 2 ;;
esac
