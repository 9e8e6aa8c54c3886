#!/bin/bash
# Run `sillwatch run` for many site files with GNU parallel, on this
# machine or on several over ssh (parallel's --sshlogin), each site's
# outputs in OUT/NAME/ (NAME: the site file's name without its extension),
# then `sillwatch fleet` over the sites that ran, into OUT/fleet.csv.
# See the README, "Many sites and many machines".  The results are
# hydrostatic screening only, as every output of sillwatch.
set -u
FLEET_PROG=fleet-parallel
here=$(cd -- "$(dirname -- "${BASH_SOURCE[0]}")" && pwd -P) || exit 2
# shellcheck source=tools/fleet-lib.sh
. "$here/fleet-lib.sh"

usage() {
    cat <<'EOF'
Usage: tools/fleet-parallel.sh -o OUT [-j N] [-S LOGIN]... [--sillwatch PATH]
                               (SITE.ini... | --list FILE) [-- RUN-OPTION...]
Run 'sillwatch run' for each site file with GNU parallel, each site's
outputs in OUT/NAME/ (NAME: the site file's name without its extension),
then 'sillwatch fleet' over the sites that ran, into OUT/fleet.csv.

  -o OUT            the output folder (made if missing)
  -j N              jobs at a time on each machine (parallel's -j;
                    default: one per CPU core)
  -S, --sshlogin LOGIN
                    run on this machine over ssh (parallel's --sshlogin:
                    [N/]user@host, ':' for this machine); repeatable;
                    default: this machine only.  Every machine must see
                    the site files, their level files and OUT at the same
                    paths (a shared file system) and have sillwatch.
  --sillwatch PATH  the program, on every machine (default: sillwatch,
                    or $SILLWATCH when set)
  --list FILE       read the site files from FILE, one per line (blank
                    lines and lines starting with # skipped)
  --                the rest goes to every 'sillwatch run' (--report,
                    --by month, ...)

Writes OUT/jobs.tsv (parallel's job log: host, run time, exit per site)
and, when some site did not run to a verdict, OUT/failed-sites.txt.
Exit status: 0 every gate of every site held its margin, 1 some gate did
not, 2 usage, 9 some site did not run to a verdict (the table holds the
others); other codes: 'sillwatch fleet' failed.
Caution: hydrostatic screening only; not a structural assessment. Defer
to local codes and a licensed engineer before acting on the results.
EOF
}

out='' jobs='' sw=${SILLWATCH:-sillwatch}
logins=() run_opts=()
while (($# > 0)); do
    case $1 in
    -o | -j | -S | --sshlogin | --sillwatch | --list)
        (($# >= 2)) || fleet_die "option '$1' needs a value"
        case $1 in
        -o) out=$2 ;;
        -j) jobs=$2 ;;
        -S | --sshlogin) logins+=(--sshlogin "$2") ;;
        --sillwatch) sw=$2 ;;
        --list) fleet_read_list "$2" ;;
        esac
        shift 2 ;;
    -h | --help) usage; exit 0 ;;
    --) shift; run_opts=("$@"); break ;;
    -*) fleet_die "unknown option '$1' (try --help)" ;;
    *) FLEET_SITES+=("$1"); shift ;;
    esac
done
command -v parallel >/dev/null 2>&1 ||
    fleet_die "GNU parallel is not installed (Debian: apt-get install parallel)"
fleet_prepare "$out"

# The command for each site: {1} the site file, {2} its name; parallel
# quotes both for the shell (and for ssh), the fixed words are quoted here.
cmd="$(printf '%q ' "$sw" run) {1} -o $(printf '%q' "$FLEET_OUT")/{2} -q"
for o in "${run_opts[@]}"; do
    cmd+=" $(printf '%q' "$o")"
done
# parallel's own exit status counts the jobs that did not exit 0, which
# includes exit 1 (a gate below its margin, a result); the job log says
# what each site did.
parallel --will-cite --joblog "$FLEET_OUT/jobs.tsv" --tagstring '{2}:' \
    ${jobs:+-j "$jobs"} "${logins[@]}" "$cmd" \
    ::: "${FLEET_ABS[@]}" :::+ "${FLEET_STEMS[@]}"

# Seq (1-based, the order of the sites), Exitval, Signal
declare -A code=()
while IFS=$'\t' read -r seq _ _ _ _ _ exitval signal _; do
    [[ $seq =~ ^[0-9]+$ ]] || continue
    if [[ $signal != 0 ]]; then
        code[$seq]=$((128 + signal))
    else
        code[$seq]=$exitval
    fi
done < <(cat -- "$FLEET_OUT/jobs.tsv" 2>/dev/null)
codes=()
for ((i = 1; i <= ${#FLEET_STEMS[@]}; i++)); do
    codes+=("${code[$i]-}")
done
fleet_merge "$sw" "${codes[@]}"
