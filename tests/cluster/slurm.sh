#!/bin/sh
# Runs the README's Slurm job array as written on a one-node cluster started
# here on localhost (munged with a key made for the run, slurmctld and slurmd
# with a minimal slurm.conf, all in a temporary folder and on free ports),
# then requires the merged parts to be the same bytes as the unsharded sweep.
# One task is requeued while it runs, to prove that --resume carries it on.
# The daemons, the jobs and the folder are removed at the end, also on failure.
# Usage: slurm.sh BIN_DIR SOURCE_DIR   (BIN_DIR holds swashtune-cli)
set -eu
bin_dir=$(cd "$1" && pwd)
source_dir=$(cd "$2" && pwd)
. "$source_dir/tests/cluster/common.sh"
[ "$(id -u)" -eq 0 ] ||
  skip "needs root: slurmd runs the tasks and the daemons run as root on this test cluster (CI runs as root)"
PATH=$bin_dir:$PATH:/usr/sbin:/sbin
export PATH
need_commands munged mungekey slurmctld slurmd sbatch squeue sinfo scontrol scancel

limit=300  # s for the whole array, far above the half minute it needs
requeued_task=2
t0=$(date +%s)
elapsed() { echo "$(($(date +%s) - t0)) s"; }

work=$(mktemp -d "${TMPDIR:-/tmp}/swashtune-slurm.XXXXXX")
chmod 755 "$work"  # munged wants its socket's folders searchable by all
job=""
munged_pid=""
slurmctld_pid=""
slurmd_pid=""

stop_pid() {  # stops a daemon this script started, by its process id
  [ -n "$1" ] || return 0
  kill "$1" 2> /dev/null || return 0
  n=0
  while kill -0 "$1" 2> /dev/null && [ $n -lt 100 ]; do sleep 0.1; n=$((n + 1)); done
  kill -9 "$1" 2> /dev/null || true
  wait "$1" 2> /dev/null || true
}

cleanup() {
  status=$?
  set +e
  if [ -n "$job" ]; then
    scancel "$job" 2> /dev/null
    n=0
    while [ -n "$(squeue -h -j "$job" 2> /dev/null)" ] && [ $n -lt 300 ]; do sleep 0.1; n=$((n + 1)); done
  fi
  stop_pid "$slurmd_pid"
  stop_pid "$slurmctld_pid"
  stop_pid "$munged_pid"
  if [ "$status" -ne 0 ]; then
    for log in "$work"/log/*.log "$work"/job/slurm-*.out; do
      [ -f "$log" ] && { echo "--- $log (last lines)"; tail -n 15 "$log"; }
    done
  fi
  rm -rf "$work"
  exit "$status"
}
trap cleanup EXIT
trap 'exit 1' INT TERM HUP

fail() {
  echo "FAIL: $*" >&2
  exit 1
}

# ---- the cluster ---------------------------------------------------------
mkdir -p "$work/key" "$work/munge" "$work/state" "$work/spool" "$work/log" "$work/job" "$work/plain"
chmod 700 "$work/key"
mungekey --create --keyfile="$work/key/munge.key"
munged --foreground --key-file="$work/key/munge.key" --socket="$work/munge/socket" \
  --pid-file="$work/munge/munged.pid" --seed-file="$work/key/seed" --log-file="$work/log/munged.log" \
  > "$work/log/munged.out" 2>&1 &
munged_pid=$!

ports=$(/usr/bin/python3 -c '
import socket
sockets = [socket.socket() for _ in range(2)]
for s in sockets: s.bind(("127.0.0.1", 0))
print(" ".join(str(s.getsockname()[1]) for s in sockets))')
node=$(hostname -s 2> /dev/null || hostname)
cpus=$(nproc)
[ "$cpus" -ge 2 ] || cpus=2  # the script asks for 2 CPUs a task
cat > "$work/slurm.conf" << EOF
ClusterName=swashtune-test
SlurmctldHost=$node(127.0.0.1)
SlurmctldPort=${ports% *}
SlurmdPort=${ports#* }
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$work/munge/socket
StateSaveLocation=$work/state
SlurmdSpoolDir=$work/spool
SlurmctldPidFile=$work/slurmctld.pid
SlurmdPidFile=$work/slurmd.pid
SlurmctldLogFile=$work/log/slurmctld.log
SlurmdLogFile=$work/log/slurmd.log
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
JobCompType=jobcomp/none
SchedulerType=sched/builtin
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
SlurmdParameters=config_overrides
MpiDefault=none
SwitchType=switch/none
MailProg=/bin/true
ReturnToService=2
MinJobAge=600
NodeName=$node NodeAddr=127.0.0.1 CPUs=$cpus State=UNKNOWN
PartitionName=test Nodes=ALL Default=YES MaxTime=INFINITE State=UP
EOF
SLURM_CONF=$work/slurm.conf
export SLURM_CONF

n=0
until [ -S "$work/munge/socket" ]; do
  kill -0 "$munged_pid" 2> /dev/null || fail "munged did not start"
  [ $n -lt 100 ] || fail "munged made no socket in 10 s"
  sleep 0.1
  n=$((n + 1))
done
slurmctld -D -f "$SLURM_CONF" > "$work/log/slurmctld.out" 2>&1 &
slurmctld_pid=$!
slurmd -D -f "$SLURM_CONF" -N "$node" > "$work/log/slurmd.out" 2>&1 &
slurmd_pid=$!
n=0
until [ "$(sinfo -h -n "$node" -o %T 2> /dev/null)" = idle ]; do
  kill -0 "$slurmctld_pid" 2> /dev/null || fail "slurmctld stopped"
  kill -0 "$slurmd_pid" 2> /dev/null || fail "slurmd stopped"
  [ $n -lt 300 ] || fail "the node did not come up idle in 30 s: $(sinfo -h 2>&1)"
  sleep 0.1
  n=$((n + 1))
done
echo "cluster up after $(elapsed): $(sinfo -h -o '%P %a %D node %N %T, %c CPUs')"

# ---- the README's job array --------------------------------------------------
readme_recipe "$source_dir/README.md" slurm-array > "$work/job/sweep.sh"
readme_recipe "$source_dir/README.md" slurm-merge > "$work/merge.sh"
echo "--- the README's job script, submitted as written:"
cat "$work/job/sweep.sh"
cp "$source_dir/tests/cluster/press.toml" "$work/job/press.toml"
cp "$source_dir/tests/cluster/press.toml" "$work/plain/press.toml"
cd "$work/job"
job=$(sbatch --parsable sweep.sh)
job=${job%%;*}
echo "submitted job array $job at $(elapsed)"

state_of() { scontrol -o show job "$1" 2> /dev/null | sed -n 's/.*JobState=\([A-Z_]*\).*/\1/p' | head -n 1; }

# Requeue one task while it runs: as soon as its part holds two rows.
part=part-$requeued_task.csv
deadline=$(($(date +%s) + limit))
until [ -f "$part" ] && [ "$(wc -l < "$part")" -ge 3 ]; do
  [ "$(date +%s)" -lt "$deadline" ] || fail "task $requeued_task wrote no rows in $limit s"
  sleep 0.05
done
scontrol requeue "${job}_$requeued_task"
n=0
while [ "$(state_of "${job}_$requeued_task")" != PENDING ]; do
  [ $n -lt 300 ] || fail "task $requeued_task is not pending 30 s after the requeue: $(state_of "${job}_$requeued_task")"
  sleep 0.1
  n=$((n + 1))
done
rows_at_stop=$(($(wc -l < "$part") - 1))  # complete rows: a cut-off last line has no line end
sleep 1
[ "$(($(wc -l < "$part") - 1))" -eq "$rows_at_stop" ] || fail "$part still grows after the requeue"
echo "task $requeued_task requeued at $(elapsed) with $rows_at_stop rows in $part"
# Slurm holds a requeued job back for a while; let it start again at once.
scontrol update JobId="${job}_$requeued_task" StartTime=now

while [ -n "$(squeue -h -j "$job")" ]; do
  [ "$(date +%s)" -lt "$deadline" ] || fail "the array has not finished in $limit s: $(squeue -h -j "$job")"
  sleep 0.2
done
echo "array finished at $(elapsed)"
tasks=$(scontrol -o show job "$job" | grep -c 'ArrayTaskId=')
[ "$tasks" -eq 4 ] || fail "expected the README's 4-task array, found $tasks tasks"
scontrol -o show job "$job" | while read -r line; do
  task=$(echo "$line" | sed -n 's/.*ArrayTaskId=\([0-9]*\).*/\1/p')
  state=$(echo "$line" | sed -n 's/.*JobState=\([A-Z_]*\).*/\1/p')
  code=$(echo "$line" | sed -n 's/.*ExitCode=\([0-9:]*\).*/\1/p')
  restarts=$(echo "$line" | sed -n 's/.*Restarts=\([0-9]*\).*/\1/p')
  echo "task $task: $state, exit $code, restarts $restarts: $(head -n 1 "slurm-${job}_$task.out")"
  [ "$state" = COMPLETED ] && [ "$code" = 0:0 ] || fail "task $task did not complete"
done

# The requeued task resumed: it kept the rows it had and computed the rest.
log=slurm-${job}_$requeued_task.out
grep -q ", $rows_at_stop already done, " "$log" || fail "$log does not report the $rows_at_stop rows kept by --resume"
computed=$(sed -n 's/.* already done, \([0-9]*\) computed.*/\1/p' "$log")
points=$(($(wc -l < "$part") - 1))
[ "$rows_at_stop" -gt 0 ] && [ "$computed" -gt 0 ] && [ $((rows_at_stop + computed)) -eq "$points" ] ||
  fail "task $requeued_task: $rows_at_stop rows kept + $computed computed != $points points"
echo "ok: task $requeued_task resumed: $rows_at_stop rows kept, $computed computed after the requeue"

# ---- merged parts against the unsharded sweep ---------------------------------
echo "--- the README's merge line:"
cat "$work/merge.sh"
sh -eu "$work/merge.sh"
axes=$(recipe_axes sweep.sh)
[ -n "$axes" ] || fail "the job script has no --vary"
# shellcheck disable=SC2086 # the axes are separate words
(cd "$work/plain" && swashtune-cli sweep press.toml $axes --jobs 2 --out sweep.csv > /dev/null)
same_bytes "$work/plain/sweep.csv" "$work/job/sweep.csv"
echo "passed in $(elapsed)"
