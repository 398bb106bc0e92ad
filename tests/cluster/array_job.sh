#!/usr/bin/env bash
# The README's Slurm array job ("Maps on a cluster"), run for real on the
# single-node cluster of tests/cluster/start.sh:
#
#   bash tests/cluster/start.sh && cargo build --release && bash tests/cluster/array_job.sh
#
# Extracts the section's two ```sh blocks from README.md (no second copy):
# the first is the job script (saved as map.sh), the second submits it and the
# dependent merge job; runs the second in a scratch directory (with
# scenarios/ linked in and the release binary on PATH), waits for every job
# of that directory, checks each ended COMPLETED with exit code 0, then runs
# the same script as one process (its --shard removed, --out single) and
# checks that the merged map and the single run's are byte-identical, every
# file (the project's guarantee: shards merged equal a single run byte for
# byte, tests/map.rs; so nothing is excluded from the comparison).
#
# No cluster (start.sh skipped, or none running): prints "skipped: <reason>"
# and exits 0, except under CI=true as root, where it fails: there the
# cluster must start, so that this test cannot silently never run in CI.
# The binary: ${CARGO_TARGET_DIR:-target}/release/icefold (cargo build --release).
set -euo pipefail
REPO=$(cd "$(dirname "$0")/../.." && pwd)
DIR=${ICEFOLD_SLURM_DIR:-/var/tmp/icefold-slurm}
export SLURM_CONF=${SLURM_CONF:-$DIR/slurm.conf}
TIMEOUT=${ICEFOLD_SLURM_TIMEOUT:-400}

no_cluster() {
    if [ "${CI:-}" = true ] && [ "$(id -u)" = 0 ]; then
        echo "FAIL: $1 (under CI=true as root the cluster must run: tests/cluster/start.sh)" >&2
        exit 1
    fi
    echo "skipped: $1"
    exit 0
}
fail() {
    echo "FAIL: $*" >&2
    exit 1
}
reason() {
    if [ -s "$DIR/skipped" ]; then
        echo "tests/cluster/start.sh did not start a cluster: $(cat "$DIR/skipped")"
    else
        echo "$1 (start one: bash tests/cluster/start.sh)"
    fi
}
command -v sbatch >/dev/null || no_cluster "$(reason "Slurm is not installed (no sbatch)")"
[ -f "$SLURM_CONF" ] || no_cluster "$(reason "no $SLURM_CONF")"
scontrol ping 2>/dev/null | grep -q UP || no_cluster "$(reason "no Slurm controller answers ($SLURM_CONF)")"
[ -n "$(sinfo -h -t idle,mixed,allocated -o %n 2>/dev/null)" ] ||
    no_cluster "$(reason "the controller answers but no node is up ($(sinfo -h -o '%n %T' | paste -sd' '))")"

target=${CARGO_TARGET_DIR:-target}
case $target in /*) ;; *) target=$REPO/$target ;; esac
[ -x "$target/release/icefold" ] || fail "no $target/release/icefold: run cargo build --release first"
export PATH=$target/release:$PATH

# the README's two blocks, in order, from the section "Maps on a cluster"
block() {
    awk -v want="$1" '
        /^### Maps on a cluster$/ { sec = 1; next }
        sec && /^##/ { sec = 0 }
        sec && /^```sh$/ { n++; fence = 1; next }
        sec && fence && /^```$/ { fence = 0; next }
        sec && fence && n == want { print }
    ' "$REPO/README.md"
}
script=$(block 1)
submit=$(block 2)
[ -n "$script" ] && [ -n "$submit" ] || fail "README.md, Maps on a cluster: expected two \`\`\`sh blocks (job script, submission)"
[ -z "$(block 3)" ] || fail "README.md, Maps on a cluster: more than two \`\`\`sh blocks; which one runs?"
shards=$(sed -nE 's|.*--shard "\$SLURM_ARRAY_TASK_ID/([0-9]+)".*|\1|p' <<<"$script")
[ -n "$shards" ] || fail "the README's job script has no --shard \"\$SLURM_ARRAY_TASK_ID/N\""

scratch=$(mktemp -d "${TMPDIR:-/tmp}/icefold-slurm-job.XXXXXX")
ln -s "$REPO/scenarios" "$scratch/scenarios"
printf '%s\n' "$script" >"$scratch/map.sh"
echo "cluster test in $scratch: the README's map.sh (${shards} shards) and its submission:"
sed 's/^/    /' <<<"$submit"
t0=$(date +%s)
(cd "$scratch" && bash -euo pipefail -c "$submit") || fail "the README's submission commands failed"

# every job of the scratch directory (array tasks and the merge), until done;
# a job succeeded when Slurm reports COMPLETED with exit code 0:0 (the
# scheduler's own record of the job, as scontrol reports it; from memory)
jobs_here() { scontrol -o show job 2>/dev/null | grep -F " WorkDir=$scratch " || true; }
terminal='^(COMPLETED|FAILED|CANCELLED|TIMEOUT|NODE_FAIL|OUT_OF_MEMORY|PREEMPTED|BOOT_FAIL|DEADLINE)$'
while :; do
    states=$(jobs_here | grep -oE ' JobState=[A-Z_]+' | cut -d= -f2)
    [ -n "$states" ] || fail "no job of $scratch is known to slurmctld"
    grep -qvE "$terminal" <<<"$states" || break
    if [ $(($(date +%s) - t0)) -gt "$TIMEOUT" ]; then
        squeue
        fail "the jobs did not finish within $TIMEOUT s (ICEFOLD_SLURM_TIMEOUT)"
    fi
    sleep 1
done
t_cluster=$(($(date +%s) - t0))
records=$(jobs_here)
show_logs() {
    for f in "$scratch"/slurm-*.out; do
        [ -s "$f" ] && { echo "--- $f"; cat "$f"; }
    done
}
bad=$(grep -vE ' JobState=COMPLETED .* ExitCode=0:0 ' <<<"$records" |
    grep -oE '^JobId=[0-9]+|JobName=[^ ]+| JobState=[A-Z_]+|ArrayTaskId=[^ ]+|ExitCode=[0-9:]+' | paste -sd' ' || true)
[ -z "$bad" ] || {
    show_logs
    fail "jobs that did not complete: $bad"
}
ntasks=$(grep -c ' ArrayTaskId=[0-9]* ' <<<"$records" || true)
nmerge=$(grep -vc ' ArrayJobId=' <<<"$records" || true)
[ "$ntasks" = "$shards" ] || fail "$ntasks array tasks COMPLETED, expected $shards"
[ "$nmerge" = 1 ] || fail "$nmerge jobs besides the array's, expected 1 (the merge)"
echo "cluster: $ntasks array tasks and the merge job COMPLETED (exit 0) in $t_cluster s"
[ -d "$scratch/map" ] || fail "the merge job wrote no $scratch/map"

# the same script as a single process: --shard removed, --out single
single=$(sed -E 's/ --shard "[^"]*"//; s/--out shards( |$)/--out single\1/' <<<"$script")
grep -q -- '--shard' <<<"$single" && fail "could not remove --shard from the README's job script"
grep -q -- '--out single' <<<"$single" || fail "the README's job script has no --out shards"
t0=$(date +%s)
(cd "$scratch" && SLURM_CPUS_PER_TASK=$(nproc) bash -euo pipefail -c "$single") >"$scratch/single.log" 2>&1 || {
    cat "$scratch/single.log"
    fail "the single-process run failed"
}
t_single=$(($(date +%s) - t0))
# the command, its continuation lines joined
command=$(sed -e ':a' -e '/\\$/N; s/\\\n *//; ta' <<<"$single" | grep '^icefold ')
echo "single process: $command (SLURM_CPUS_PER_TASK=$(nproc)) in $t_single s"

# byte for byte, every file (our requirement, README: shards merged equal a
# single run; the single run is the independent path, with neither shards nor
# Slurm; common practice, no source)
files=$(cd "$scratch/single" && find . -type f | sort)
[ -n "$files" ] || fail "the single run wrote no files"
diff -r "$scratch/map" "$scratch/single" >/dev/null ||
    fail "merged map and single run differ: $(diff -rq "$scratch/map" "$scratch/single" | paste -sd';')"
echo "ok: the merged map equals the single run byte for byte ($(paste -sd' ' <<<"$files" | sed 's|\./||g'))"
rm -rf "$scratch"
