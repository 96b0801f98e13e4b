#!/usr/bin/env bash
# Start a one-node Slurm cluster on this machine for the tests: munged,
# slurmctld and slurmd, configured in a directory of our own (no cgroups,
# root as the Slurm user). Prints the SLURM_CONF to export. Needs Debian's
# slurm-wlm and munge.
set -euo pipefail
# The daemons live in sbin, which a non-login PATH may lack.
export PATH="$PATH:/usr/sbin:/sbin"
dir=${1:-/tmp/gapbook-slurm}
mkdir -p "$dir/state" "$dir/spool" /run/munge /var/log/munge /var/lib/munge /etc/munge
host=$(hostname -s)
cpus=$(nproc)
cat > "$dir/slurm.conf" <<CONF
ClusterName=gapbook
SlurmctldHost=$host
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SchedulerType=sched/builtin
SelectType=select/cons_tres
SelectTypeParameters=CR_CPU
StateSaveLocation=$dir/state
SlurmdSpoolDir=$dir/spool
SlurmctldPidFile=$dir/slurmctld.pid
SlurmdPidFile=$dir/slurmd.pid
SlurmctldLogFile=$dir/slurmctld.log
SlurmdLogFile=$dir/slurmd.log
ReturnToService=2
MpiDefault=none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
NodeName=$host CPUs=$cpus State=UNKNOWN
PartitionName=main Nodes=$host Default=YES MaxTime=INFINITE State=UP
CONF
export SLURM_CONF="$dir/slurm.conf"
if [ ! -s /etc/munge/munge.key ]; then
  dd if=/dev/urandom of=/etc/munge/munge.key bs=1024 count=1 2>/dev/null
fi
chmod 0400 /etc/munge/munge.key
chown -R root:root /etc/munge /run/munge /var/log/munge /var/lib/munge
chmod 0700 /etc/munge /var/lib/munge /var/log/munge
chmod 0755 /run/munge
pgrep -x munged >/dev/null || munged --force
pgrep -x slurmctld >/dev/null || slurmctld -f "$SLURM_CONF"
pgrep -x slurmd >/dev/null || slurmd -f "$SLURM_CONF"
for i in $(seq 1 60); do
  if sinfo -h -o '%T' 2>/dev/null | grep -qE 'idle|mixed'; then
    echo "SLURM_CONF=$SLURM_CONF"
    exit 0
  fi
  sleep 1
done
echo "slurm did not come up; logs:" >&2
tail -n 30 "$dir"/slurmctld.log "$dir"/slurmd.log >&2 || true
exit 1
