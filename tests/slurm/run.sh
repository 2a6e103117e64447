#!/usr/bin/env bash
# A check run as a Slurm job array on a real single-node Slurm cluster, faults included:
#   bash tests/slurm/run.sh OUT_DIR
#
# Installs munge and Slurm from the distribution's packages when missing (skips, exit 0, with a
# message only when they cannot be installed), starts munged, slurmctld and slurmd on this
# machine (tests/slurm/cluster.sh) and stops them on exit, then:
#   1. the exhaustive tanh check of lumen_tanh_f32 over [-4, 4) unsharded (OUT_DIR/whole.json);
#   2. the same check through `ulpgauge slurm --shards 4 --dir OUT_DIR` and OUT_DIR/submit.sh,
#      with three faults: task 1 is requeued while it runs (it must repeat its shard), the check
#      process of task 2 is killed (a task that dies, as under the OOM killer), task 3 is
#      cancelled while it runs (a lost node). The merge job behind the array must be cancelled,
#      a merge job of the incomplete set must refuse it and name shards 2/4 and 3/4, and
#      `submit.sh --missing` must complete it: OUT_DIR/merged.json equal to whole.json in every
#      key but provenance and timings, task logs in OUT_DIR/slurm-*.out;
#   3. a kernel that crashes on one input (lumen_tanh_f16_crash, exhaustive f16) as a 4-task
#      array in OUT_DIR/crash: a crash is a finding, not a lost shard, so every task succeeds and
#      the merged report (exit status 3, the crashing input named) equals the unsharded one.
# Exits non-zero on any difference.
set -euo pipefail
cd "$(dirname "$0")/../.."
root="$(pwd)"
[ $# -eq 1 ] || { echo "usage: tests/slurm/run.sh OUT_DIR" >&2; exit 2; }
mkdir -p "$1"
out="$(cd "$1" && pwd)"
fail() { echo "tests/slurm: FAIL: $*" >&2; exit 1; }

if [ "$(id -u)" -ne 0 ]; then
  echo "tests/slurm: needs root: slurmd starts each job as its user, and munge and Slurm may need installing" >&2
  exit 2
fi
source tests/slurm/cluster.sh
if ! cluster_install; then
  echo "tests/slurm: SKIPPED: munge and Slurm are not installed and could not be installed from the distribution's packages (slurmctld, slurmd, slurm-client, munge)"
  exit 0
fi

[ -x target/release/ulpgauge ] || cargo build --release --locked
ulpgauge="$root/target/release/ulpgauge"
[ -f kernels-under-test/build/liblumen_edge.so ] && [ -f kernels-under-test/build/liblumen_faulty.so ] ||
  bash kernels-under-test/build.sh >/dev/null

# The daemons' state lives outside OUT_DIR: munge's socket path must stay short.
state="$(mktemp -d /tmp/ulpgauge-slurm.XXXXXX)"
trap 'cluster_stop; rm -rf "$state"' EXIT
trap 'exit 130' INT TERM
rm -rf "$out/shards" "$out/crash" "$out"/slurm-*.out "$out"/merge-*.out "$out/merged.json" \
  "$out/whole.json" "$out/jobs.txt"

check=(--lib kernels-under-test/build/liblumen_edge.so --symbol lumen_tanh_f32 --function tanh
  --format f32 --sweep exhaustive --range -4,4)

echo "== unsharded run"
start=$SECONDS
TIMEFORMAT="unsharded: check took %R s wall, %U s user, %S s system"
time "$ulpgauge" check "${check[@]}" --quiet --no-progress --json "$out/whole.json" ||
  fail "the unsharded check exited $?"
whole_seconds=$((SECONDS - start))

echo "== single-node cluster"
cluster_start "$state"
sinfo

# The Slurm job id of array task $1_$2 (empty once it has left the queue).
task_job() { squeue -h -j "$1_$2" -o %A 2>/dev/null || true; }
task_state() { squeue -h -j "$1_$2" -o %T 2>/dev/null || true; }
# Field $2 (JobState, ExitCode, Restarts, Reason, ...) of job $1 as scontrol shows it.
job_field() { scontrol show job "$1" | tr ' ' '\n' | sed -n "s/^$2=//p" | head -n 1; }
# Waits (at most $2 s) until job $1 has left the queue.
wait_gone() {
  local limit=$((SECONDS + $2))
  while [ -n "$(squeue -h -j "$1" -o %i 2>/dev/null)" ]; do
    [ $SECONDS -lt $limit ] || fail "job $1 still queued after $2 s: $(squeue -j "$1" 2>&1)"
    sleep 1
  done
}
# Waits (at most 1800 s) until task $2 of array $1 runs, then a further 2 s.
wait_running() {
  local limit=$((SECONDS + 1800))
  until [ "$(task_state "$1" "$2")" = RUNNING ]; do
    [ $SECONDS -lt $limit ] || fail "task $1_$2 did not start: $(squeue 2>&1)"
    sleep 0.2
  done
  sleep 2
}
last_submission() { tail -n 1 "$out/jobs.txt"; }

echo "== 4-task array, with a requeue, a killed task and a cancelled task"
start=$SECONDS
"$ulpgauge" slurm --shards 4 --dir "$out" -- "${check[@]}"
bash "$out/submit.sh"
read -r array merge _ < <(last_submission)

wait_running "$array" 1
wait_running "$array" 2
# Fault 1, a requeue (what Slurm does to a --requeue job when its node fails): the task is
# killed and runs again from the start with the same task id (after cred_expire, see
# cluster.sh).
scontrol requeue "${array}_1"
# Fault 2, a task that dies: its check process is killed as the OOM killer would.
job2="$(task_job "$array" 2)"
killed=""
for pid in $(scontrol listpids "$job2" | awk 'NR > 1 { print $1 }'); do
  cmd="$(tr '\0' ' ' <"/proc/$pid/cmdline" 2>/dev/null || true)"
  if [[ "$cmd" == "$ulpgauge check "* ]]; then kill -9 "$pid" && killed="$pid"; fi
done
[ -n "$killed" ] || fail "no check process found in task ${array}_2 (job $job2)"
# Fault 3, a lost task: cancelled while it runs.
wait_running "$array" 3
scancel "${array}_3"
wait_gone "$array" 3600
wait_gone "$merge" 60
first_seconds=$((SECONDS - start))

[ "$(job_field "$merge" JobState)" = CANCELLED ] ||
  fail "merge job $merge: $(job_field "$merge" JobState), expected CANCELLED after failed tasks"
[ "$(job_field "$merge" Reason)" = DependencyNeverSatisfied ] ||
  fail "merge job $merge: reason $(job_field "$merge" Reason), expected DependencyNeverSatisfied"
declare -A expect=([1]=COMPLETED [2]=FAILED [3]=CANCELLED [4]=COMPLETED)
for t in 1 2 3 4; do
  got="$(job_field "${array}_$t" JobState)"
  [ "$got" = "${expect[$t]}" ] || fail "task ${array}_$t: $got, expected ${expect[$t]}"
done
[ "$(job_field "${array}_1" Restarts)" = 1 ] || fail "task ${array}_1 was not restarted once"
grep -q "shard 1/4: .*attempt 2" "$out/slurm-${array}_1.out" || fail "task 1's log shows no second attempt"
for i in 2 3; do
  [ ! -e "$out/shards/shard-$i-of-4.json" ] || fail "shard $i/4 has a report although its task died"
done
echo "tasks: 1 COMPLETED after a requeue, 2 FAILED, 3 CANCELLED, 4 COMPLETED; merge job $merge CANCELLED (DependencyNeverSatisfied)"

# A merge of the incomplete set, as a job on the cluster: refused, naming both shards.
code=0
sbatch --wait --quiet "$out/merge.sbatch" || code=$?
[ "$code" -eq 2 ] || fail "a merge of an incomplete set exited $code, expected 2"
refusal="$(ls -t "$out"/merge-*.out | head -n 1)"
grep -q "missing shard(s) 2/4, 3/4" "$refusal" || fail "$refusal does not name shards 2/4 and 3/4: $(cat "$refusal")"
[ ! -e "$out/merged.json" ] || fail "an incomplete set left a merged report"
echo "merge of the incomplete set refused: $(grep -m 1 missing "$refusal")"

echo "== resubmitting the missing shards"
start=$SECONDS
bash "$out/submit.sh" --missing
read -r array2 merge2 tasks2 < <(last_submission)
[ "$tasks2" = "2,3" ] || fail "submit.sh --missing resubmitted tasks $tasks2, expected 2,3"
wait_gone "$array2" 3600
wait_gone "$merge2" 600
resubmit_seconds=$((SECONDS - start))
[ "$(job_field "$merge2" JobState)" = COMPLETED ] ||
  fail "merge job $merge2: $(job_field "$merge2" JobState) $(job_field "$merge2" ExitCode): $(cat "$out/merge-$merge2.out")"
[ -f "$out/merged.json" ] || fail "no $out/merged.json"
logs=("$out"/slurm-*.out)
[ ${#logs[@]} -ge 4 ] || fail "${#logs[@]} task logs, expected at least 4"
python3 tests/slurm/compare.py "$out/whole.json" "$out/merged.json" || fail "merged.json differs from the unsharded run"

echo "== a kernel that crashes on one input, as a 4-task array"
crash=(--lib kernels-under-test/build/liblumen_faulty.so --symbol lumen_tanh_f16_crash
  --function tanh --format f16)
mkdir -p "$out/crash"
code=0
"$ulpgauge" check "${crash[@]}" --quiet --no-progress --json "$out/crash/whole.json" || code=$?
[ "$code" -eq 3 ] || fail "the unsharded crash check exited $code, expected 3"
"$ulpgauge" slurm --shards 4 --dir "$out/crash" -- "${crash[@]}" --quiet
bash "$out/crash/submit.sh"
read -r carray cmerge _ < <(tail -n 1 "$out/crash/jobs.txt")
wait_gone "$carray" 600
wait_gone "$cmerge" 600
for t in 1 2 3 4; do
  got="$(job_field "${carray}_$t" JobState)"
  [ "$got" = COMPLETED ] || fail "crash task ${carray}_$t: $got, expected COMPLETED"
done
[ "$(job_field "$cmerge" ExitCode)" = 3:0 ] ||
  fail "crash merge job $cmerge: exit $(job_field "$cmerge" ExitCode), expected 3:0"
python3 tests/slurm/compare.py "$out/crash/whole.json" "$out/crash/merged.json" ||
  fail "the crash run's merged.json differs from the unsharded run"
python3 - "$out/crash/merged.json" <<'PY' || fail "the merged crash report does not name input 0x4880"
import json, sys
r = json.load(open(sys.argv[1]))
# lumen_faulty.c: lumen_tanh_f16_crash reads a null table at exactly x = 9.0 (0x4880).
assert r["crash"] and r["crash"]["input"]["bits"] == "0x4880", r["crash"]
assert r["verdict"]["exit_code"] == 3
PY

echo "== tests/slurm: PASS"
printf 'unsharded %d s; 4-task array with faults %d s; resubmission of 2 tasks %d s\n' \
  "$whole_seconds" "$first_seconds" "$resubmit_seconds"
grep -h "check took" "$out"/slurm-*.out | sed 's/^/  /'
grep -h "check took" "$out"/slurm-*.out |
  awk '{ w += $5; u += $8; s += $11 } END { printf "  all shards: %.1f s wall, %.1f s user, %.1f s system\n", w, u, s }'
