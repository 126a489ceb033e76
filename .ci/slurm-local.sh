#!/usr/bin/env bash
# slurm-local.sh -- a real one-node SLURM cluster on localhost, so that CI can run
# Ionotate's workflow through Snakemake's SLURM executor plugin (tests/test_slurm.py).
# Debian 12 (bookworm), run as root, no service manager: every daemon is started here.
#
# Usage: .ci/slurm-local.sh install|start|check|stop|status
#   install  apt-get install slurm-wlm, munge, slurmdbd, mariadb-server (skipped if present)
#   start    write configs, start munged, MariaDB, slurmdbd, slurmctld, slurmd
#   check    sinfo, srun, sbatch and sacct smoke test
#   stop     stop every daemon this script started, by the PID in its pid file
#   status   which of those daemons are alive
#
# Accounting (slurmdbd + a private MariaDB) is always on: the executor plugin polls
# job states with `sacct`, as on a production cluster. AccountingStoreFlags=job_comment
# keeps the plugin's per-job comment (rule_<rule>_wildcards_<values>) in sacct, which
# is how the test proves that every chunk ran as its own job.
#
# Environment:
#   SLURM_BASE       state/log/pid directory   (default ${TMPDIR:-/tmp}/ionotate-slurm)
#   SLURM_PARTITION  partition name            (default debug)
#   SLURM_ACCOUNT    account created for root  (default testacct)
#   MARIADB_PORT     loopback port of the private MariaDB (default 3307)
#
# Everything listens on 127.0.0.1 (MariaDB $MARIADB_PORT, slurmctld 6817, slurmd 6818,
# slurmdbd 6819). Configs go to /etc/slurm, the default location, so every client
# command -- also those inside batch jobs -- finds them without SLURM_CONF.
set -euo pipefail

BASE=${SLURM_BASE:-${TMPDIR:-/tmp}/ionotate-slurm}
PARTITION=${SLURM_PARTITION:-debug}
ACCOUNT=${SLURM_ACCOUNT:-testacct}
DBPORT=${MARIADB_PORT:-3307}
CLUSTER=localcluster
HOST=$(hostname -s)
PACKAGES=(slurm-wlm munge slurmdbd mariadb-server)

log() { echo "[slurm-local $(date +%T)] $*" >&2; }

# wait_for <seconds> <description> <command...>: poll until the command succeeds
wait_for() {
    local t=$1 what=$2; shift 2
    local end=$((SECONDS + t))
    until "$@" >/dev/null 2>&1; do
        if ((SECONDS >= end)); then log "TIMEOUT waiting for $what"; return 1; fi
        sleep 0.3
    done
    log "$what ready"
}

alive() { [[ -s $1 ]] && kill -0 "$(cat "$1")" 2>/dev/null; }

do_install() {
    # invoke-rc.d may try to start the services; in containers policy-rc.d denies it
    # (harmless "policy-rc.d denied execution of start" messages).
    if ! dpkg -s "${PACKAGES[@]}" >/dev/null 2>&1; then
        apt-get update -qq
        DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends "${PACKAGES[@]}"
    fi
    log "installed: $(slurmd -V), munge $(dpkg-query -W -f='${Version}' munge)"
}

write_slurm_conf() {
    # Node line straight from the hardware that slurmd sees (drop the UpTime line).
    local node
    node=$(slurmd -C | head -1)
    mkdir -p /etc/slurm
    cat >/etc/slurm/slurm.conf <<EOF
ClusterName=$CLUSTER
SlurmctldHost=$HOST(127.0.0.1)
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
MpiDefault=none
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SwitchType=switch/none
MailProg=/bin/true
ReturnToService=2
MinJobAge=300
SlurmctldPidFile=$BASE/pids/slurmctld.pid
SlurmdPidFile=$BASE/pids/slurmd.pid
StateSaveLocation=$BASE/ctld-state
SlurmdSpoolDir=$BASE/slurmd-spool
SlurmctldLogFile=$BASE/log/slurmctld.log
SlurmdLogFile=$BASE/log/slurmd.log
SlurmctldDebug=info
SlurmdDebug=info
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_Core_Memory
DefMemPerCPU=1000
JobCompType=jobcomp/none
AccountingStorageType=accounting_storage/slurmdbd
AccountingStorageHost=localhost
AccountingStoreFlags=job_comment
JobAcctGatherType=jobacct_gather/linux
$node NodeAddr=127.0.0.1 State=UNKNOWN
PartitionName=$PARTITION Nodes=ALL Default=YES MaxTime=INFINITE State=UP
EOF
}

start_munge() {
    if [[ ! -s /etc/munge/munge.key ]]; then   # the Debian postinst normally creates it
        mungekey --create --keyfile=/etc/munge/munge.key
    fi
    chown munge:munge /etc/munge/munge.key && chmod 400 /etc/munge/munge.key
    mkdir -p /run/munge /var/log/munge /var/lib/munge
    chown munge:munge /run/munge /var/log/munge /var/lib/munge
    chmod 755 /run/munge
    if alive /run/munge/munged.pid; then
        # somebody else's munged: use it, but never record (and so never stop) it
        log "munged already running (pid $(cat /run/munge/munged.pid)); not ours, left alone"
    else
        # munged daemonizes and writes /run/munge/munged.pid; run it as user munge
        setpriv --reuid=munge --regid=munge --init-groups /usr/sbin/munged
        wait_for 10 "munged pid file" test -s /run/munge/munged.pid
        cp /run/munge/munged.pid "$BASE/pids/munged.pid"
    fi
    wait_for 20 munged bash -c 'munge -n | unmunge'
}

start_mariadb() {
    local dd=$BASE/mysql
    if [[ ! -d $dd/mysql ]]; then
        mkdir -p "$dd" && chown mysql:mysql "$dd"
        mariadb-install-db --no-defaults --user=mysql --datadir="$dd" \
            --auth-root-authentication-method=socket >"$BASE/log/mariadb-install.log" 2>&1
    fi
    chown mysql:mysql "$dd"
    # Private instance: own datadir, socket, port; loopback only; --no-defaults ignores /etc/mysql.
    # innodb_lock_wait_timeout=900 and buffer pool 1024M silence slurmdbd's
    # "Database settings not recommended values" error; RSS stays ~130 MB.
    nohup /usr/sbin/mariadbd --no-defaults --user=mysql --datadir="$dd" \
        --socket="$dd/mysqld.sock" --pid-file="$dd/mariadbd.pid" \
        --bind-address=127.0.0.1 --port="$DBPORT" --skip-name-resolve \
        --innodb-buffer-pool-size=1024M --innodb-lock-wait-timeout=900 \
        >"$BASE/log/mariadb.log" 2>&1 &
    echo $! >"$BASE/pids/mariadbd.pid"
    wait_for 60 mariadbd mariadb-admin --no-defaults --socket="$dd/mysqld.sock" ping
    mariadb --no-defaults --socket="$dd/mysqld.sock" -e "
        DROP DATABASE IF EXISTS slurm_acct_db;
        CREATE USER IF NOT EXISTS 'slurm'@'127.0.0.1' IDENTIFIED BY 'slurmpw';
        GRANT ALL ON slurm_acct_db.* TO 'slurm'@'127.0.0.1';
        FLUSH PRIVILEGES;"
}

start_slurmdbd() {
    cat >/etc/slurm/slurmdbd.conf <<EOF
AuthType=auth/munge
DbdHost=localhost
DbdAddr=127.0.0.1
SlurmUser=root
DebugLevel=info
LogFile=$BASE/log/slurmdbd.log
PidFile=$BASE/pids/slurmdbd.pid
StorageType=accounting_storage/mysql
StorageHost=127.0.0.1
StoragePort=$DBPORT
StorageUser=slurm
StoragePass=slurmpw
StorageLoc=slurm_acct_db
EOF
    chmod 600 /etc/slurm/slurmdbd.conf   # slurmdbd refuses a group/world-readable file
    slurmdbd                              # daemonizes, writes its PidFile
    wait_for 60 slurmdbd sacctmgr -n show cluster
    sacctmgr -i add cluster "$CLUSTER" >/dev/null
    sacctmgr -i add account "$ACCOUNT" Description=ci Organization=ci >/dev/null
    sacctmgr -i add user "$(id -un)" Account="$ACCOUNT" DefaultAccount="$ACCOUNT" >/dev/null
    log "accounts of $(id -un): $(sacctmgr -n -P -s list user "$(id -un)" format=account | sort -u | tr '\n' ' ')"
}

do_start() {
    mkdir -p "$BASE"/{pids,log}
    do_stop   # restart semantics: never leave a second copy of a daemon around
    # fresh controller/slurmd state every start (job ids restart at 1)
    rm -rf "$BASE/ctld-state" "$BASE/slurmd-spool"
    mkdir -p "$BASE/ctld-state" "$BASE/slurmd-spool"
    write_slurm_conf
    start_munge
    start_mariadb
    start_slurmdbd
    slurmctld   # daemonizes, writes SlurmctldPidFile
    wait_for 30 slurmctld bash -c 'scontrol ping | grep -q UP'
    slurmd      # daemonizes, writes SlurmdPidFile
    wait_for 30 "node $HOST idle" bash -c "sinfo -h -n $HOST -o %T | grep -qx idle"
    sinfo
}

do_check() {
    local d jid
    d=$(mktemp -d "$BASE/check.XXXX")
    log "srun: $(srun -N1 -n1 hostname)"
    jid=$(sbatch --parsable -o "$d/%j.out" --wrap 'echo hello from $SLURM_JOB_ID on $(hostname)')
    wait_for 60 "batch job $jid output" test -s "$d/$jid.out"
    log "sbatch: $(cat "$d/$jid.out")"
    wait_for 30 "job $jid gone from queue" bash -c "[ -z \"\$(squeue -h -j $jid 2>/dev/null)\" ]"
    # slurmdbd lags slurmctld by ~1-2 s (at first the record may read JobName=allocation)
    wait_for 30 "sacct record of job $jid" bash -c "sacct -X -n -P -j $jid -o JobName,State | grep -qx 'wrap|COMPLETED'"
    sacct -X -j "$jid" -o JobID,JobName,Partition,Account,State,ExitCode
    rm -rf "$d"
}

do_stop() {
    # order: compute daemon, controller, dbd, database, munge; each by its pid file,
    # which exists only for daemons this script started
    local name f pid
    for name in slurmd slurmctld slurmdbd mariadbd munged; do
        f=$BASE/pids/$name.pid
        [[ -e $f ]] || continue
        pid=$(cat "$f" 2>/dev/null || true)
        if [[ -n $pid ]] && kill -0 "$pid" 2>/dev/null; then
            kill -TERM "$pid"
            for _ in $(seq 1 100); do kill -0 "$pid" 2>/dev/null || break; sleep 0.2; done
            if kill -0 "$pid" 2>/dev/null; then log "$name ($pid) ignored TERM, sending KILL"; kill -KILL "$pid"; fi
            log "stopped $name ($pid)"
        fi
        rm -f "$f"
    done
}

do_status() {
    local f
    for f in "$BASE"/pids/*.pid; do
        [[ -e $f ]] || continue
        if alive "$f"; then echo "$(basename "$f" .pid) running pid $(cat "$f")"; else echo "$(basename "$f" .pid) NOT running"; fi
    done
}

case ${1:-} in
install) do_install ;;
start) do_start ;;
check) do_check ;;
stop) do_stop ;;
status) do_status ;;
*) echo "usage: $0 install|start|check|stop|status" >&2; exit 2 ;;
esac
