# Sourced by tests/slurm/run.sh: a private single-node Slurm cluster (munged, slurmctld,
# slurmd) started in the foreground of this shell's children, with its own munge key, socket,
# ports and state folder, so it neither needs systemd nor touches a Slurm already on the host.
#
#   cluster_install          installs munge and Slurm from the distribution when missing
#                            (returns 1 when they cannot be installed)
#   cluster_start STATE_DIR  writes the configuration, starts the daemons, waits for the node
#   cluster_stop             stops the daemons this shell started (safe to call twice)
#
# Every Slurm command then needs SLURM_CONF, which cluster_start exports.

cluster_pids=()

cluster_install() {
  local need=()
  command -v munged >/dev/null 2>&1 || need+=(munge)
  command -v slurmctld >/dev/null 2>&1 || need+=(slurmctld)
  command -v slurmd >/dev/null 2>&1 || need+=(slurmd)
  command -v sbatch >/dev/null 2>&1 || need+=(slurm-client)
  [ ${#need[@]} -eq 0 ] && return 0
  command -v apt-get >/dev/null 2>&1 || return 1
  echo "installing ${need[*]} from the distribution's packages"
  # The test starts its own daemons: a policy-rc.d answering 101 (Debian's invoke-rc.d
  # convention) keeps the packages' scripts from starting the system's services.
  local policy=/usr/sbin/policy-rc.d ours=""
  if [ ! -e "$policy" ]; then
    printf '#!/bin/sh\nexit 101\n' >"$policy" && chmod +x "$policy" && ours=1
  fi
  local ok=0
  apt-get update -qq >/dev/null 2>&1 &&
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends \
      "${need[@]}" >/dev/null 2>&1 || ok=1
  [ -z "$ours" ] || rm -f "$policy"
  [ $ok -eq 0 ] || return 1
  command -v munged >/dev/null && command -v slurmctld >/dev/null &&
    command -v slurmd >/dev/null && command -v sbatch >/dev/null
}

# A free TCP port at or above $1 (slurmctld and slurmd each need one).
cluster_free_port() {
  local port="$1"
  while (exec 3<>"/dev/tcp/127.0.0.1/$port") 2>/dev/null; do port=$((port + 1)); done
  echo "$port"
}

cluster_start() {
  local state="$1" host ctld_port slurmd_port
  mkdir -p "$state"
  state="$(cd "$state" && pwd)"
  chmod 700 "$state"
  mkdir -p "$state/ctld" "$state/spool" "$state/munge"
  chmod 700 "$state/munge"
  host="$(hostname -s)"
  ctld_port="$(cluster_free_port 16817)"
  slurmd_port="$(cluster_free_port $((ctld_port + 1)))"

  mungekey --create --keyfile="$state/munge/munge.key" --force >/dev/null
  chmod 600 "$state/munge/munge.key"
  munged --foreground --force --socket="$state/munge/socket" \
    --key-file="$state/munge/munge.key" --pid-file="$state/munge/munged.pid" \
    --log-file="$state/munge/munged.log" --seed-file="$state/munge/seed" \
    >"$state/munged.out" 2>&1 &
  cluster_pids+=($!)

  # proctrack/linuxproc and task/none: no cgroups (a container has none to give); 2 CPUs
  # whatever the host has (config_overrides), root as SlurmUser, no accounting. cred_expire
  # also sets how long a requeued job waits before it may start again (120 s by default).
  cat >"$state/slurm.conf" <<CONF
ClusterName=ulpgaugetest
SlurmctldHost=$host(127.0.0.1)
SlurmctldPort=$ctld_port
SlurmdPort=$slurmd_port
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
AuthInfo=socket=$state/munge/socket,cred_expire=10
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
MpiDefault=none
SwitchType=switch/none
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
SlurmdParameters=config_overrides
ReturnToService=2
MinJobAge=3600
KillWait=5
StateSaveLocation=$state/ctld
SlurmdSpoolDir=$state/spool
SlurmctldPidFile=$state/slurmctld.pid
SlurmdPidFile=$state/slurmd.pid
SlurmctldLogFile=$state/slurmctld.log
SlurmdLogFile=$state/slurmd.log
AccountingStorageType=accounting_storage/none
JobAcctGatherType=jobacct_gather/none
JobCompType=jobcomp/none
NodeName=$host NodeAddr=127.0.0.1 CPUs=2 State=UNKNOWN
PartitionName=test Nodes=$host Default=YES MaxTime=INFINITE State=UP
CONF
  export SLURM_CONF="$state/slurm.conf"

  local tries=0
  until [ -S "$state/munge/socket" ]; do
    tries=$((tries + 1))
    if [ $tries -gt 100 ]; then echo "munged did not start:"; cat "$state/munged.out" "$state/munge/munged.log" 2>/dev/null; return 1; fi
    sleep 0.1
  done
  slurmctld -D -c -i -f "$SLURM_CONF" >"$state/slurmctld.out" 2>&1 &
  cluster_pids+=($!)
  slurmd -D -N "$host" -f "$SLURM_CONF" >"$state/slurmd.out" 2>&1 &
  cluster_pids+=($!)
  tries=0
  until sinfo -h -N -o '%T' 2>/dev/null | grep -qx idle; do
    tries=$((tries + 1))
    if [ $tries -gt 60 ]; then
      echo "the Slurm node did not become idle:"
      sinfo -N -l 2>&1 || true
      tail -n 20 "$state/slurmctld.log" "$state/slurmd.log" 2>/dev/null || true
      return 1
    fi
    sleep 1
  done
}

# Stops what cluster_start started: cancels the jobs first (a job step outliving slurmctld would
# retry its completion message forever), then slurmd, slurmctld and munged, each by its PID.
cluster_stop() {
  [ ${#cluster_pids[@]} -eq 0 ] && return 0
  if [ -n "${SLURM_CONF:-}" ]; then
    scancel --quiet --user="$(id -un)" 2>/dev/null || true
    local tries=0
    while [ -n "$(squeue -h -o %i 2>/dev/null)" ] && [ $tries -lt 30 ]; do
      sleep 1
      tries=$((tries + 1))
    done
    # Job steps of this cluster carry its SLURM_CONF in their environment (inherited from
    # slurmd); any still alive after the cancel are ended here.
    local proc pid
    for proc in /proc/[0-9]*; do
      [ "$(cat "$proc/comm" 2>/dev/null)" = slurmstepd ] || continue
      pid="${proc#/proc/}"
      if { tr '\0' '\n' <"$proc/environ"; } 2>/dev/null | grep -qxF "SLURM_CONF=$SLURM_CONF"; then
        kill -9 "$pid" 2>/dev/null || true
      fi
    done
  fi
  local i
  # Reverse start order: slurmd, slurmctld, munged.
  for ((i = ${#cluster_pids[@]} - 1; i >= 0; i--)); do
    cluster_end "${cluster_pids[$i]}"
  done
  cluster_pids=()
}

# Ends one daemon: SIGTERM, then SIGKILL after 10 s.
cluster_end() {
  local pid="$1" tries=0
  kill "$pid" 2>/dev/null || return 0
  while kill -0 "$pid" 2>/dev/null && [ $tries -lt 100 ]; do
    sleep 0.1
    tries=$((tries + 1))
  done
  kill -9 "$pid" 2>/dev/null || true
  wait "$pid" 2>/dev/null || true
}
