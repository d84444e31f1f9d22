# Shared settings for stack-up.sh and stack-down.sh (sourced, not run).
# Every path and port can be moved with an environment variable so that several checkouts,
# or a checkout and CI, can live on one machine.

LOCAL_DIR="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
REPO_ROOT="$(cd "$LOCAL_DIR/../.." && pwd)"

STACK_DIR="${STREAMFENCE_STACK_DIR:-$REPO_ROOT/.stack}"
CACHE_DIR="${STREAMFENCE_CACHE:-${XDG_CACHE_HOME:-$HOME/.cache}/streamfence}"

KAFKA_VERSION="$(sed -n 's:.*<kafka.version>\(.*\)</kafka.version>.*:\1:p' "$LOCAL_DIR/kafka/pom.xml")"
KAFKA_HOME="$CACHE_DIR/kafka-$KAFKA_VERSION"
KAFKA_PORT="${STREAMFENCE_KAFKA_PORT:-9092}"
KAFKA_CONTROLLER_PORT="${STREAMFENCE_KAFKA_CONTROLLER_PORT:-9093}"
KAFKA_DIR="$STACK_DIR/kafka"
KAFKA_PID_FILE="$KAFKA_DIR/kafka.pid"
KAFKA_BROKERS="127.0.0.1:$KAFKA_PORT"

# The machine's Redis is used when it answers; otherwise we start our own on this port.
REDIS_URL_WANTED="${STREAMFENCE_REDIS_URL:-redis://127.0.0.1:6379}"
OWN_REDIS_PORT="${STREAMFENCE_STACK_REDIS_PORT:-6390}"
REDIS_DIR="$STACK_DIR/redis"
REDIS_PID_FILE="$REDIS_DIR/redis.pid"

ENV_FILE="$STACK_DIR/env"

# The one place stack-up.sh and stack-down.sh read their arguments; add new stack variants here.
STACK_SECURE=no
STACK_WIPE=no
STACK_BROKERS=1
STACK_REDIS_CLUSTER=no
STACK_REDIS_CLUSTER_TLS=no
parse_stack_args() {
  while (($# > 0)); do
    case "$1" in
      --secure) STACK_SECURE=yes ;;
      --wipe) STACK_WIPE=yes ;;
      --redis-cluster) STACK_REDIS_CLUSTER=yes ;;
      --redis-cluster-tls)
        STACK_REDIS_CLUSTER=yes
        STACK_REDIS_CLUSTER_TLS=yes
        ;;
      --brokers=*) STACK_BROKERS="${1#--brokers=}" ;;
      --brokers)
        (($# > 1)) || die "--brokers needs a count: 1 or 3"
        STACK_BROKERS="$2"
        shift
        ;;
      *) die "unknown argument '$1' (known: --secure, --wipe, --brokers 1|3, --redis-cluster, --redis-cluster-tls)" ;;
    esac
    shift
  done
  [[ "$STACK_BROKERS" == 1 || "$STACK_BROKERS" == 3 ]] ||
    die "--brokers takes 1 or 3 (a three-voter quorum survives one broker down), got '$STACK_BROKERS'"
  if [[ "$STACK_SECURE" == yes && "$STACK_BROKERS" != 1 ]]; then
    die "--brokers 3 --secure is not supported: the secure stack has one broker; run the three-broker stack without --secure"
  fi
  if [[ "$STACK_SECURE" == yes && "$STACK_REDIS_CLUSTER" == yes ]]; then
    die "--redis-cluster --secure is not supported: the secure stack has one TLS Redis; for a TLS Redis Cluster with ACL users beside the plain stack use --redis-cluster-tls"
  fi
  return 0
}

say() { printf 'stack: %s\n' "$*"; }
die() {
  printf 'stack: ERROR: %s\n' "$*" >&2
  exit 1
}

# True when pid file names a live process whose command line contains the marker; guards against
# a stale pid file whose number the kernel has since given to an unrelated process.
pid_alive() {
  local file="$1" marker="$2" pid
  [[ -f "$file" ]] || return 1
  pid="$(cat "$file" 2>/dev/null)"
  [[ "$pid" =~ ^[0-9]+$ ]] || return 1
  [[ -r "/proc/$pid/cmdline" ]] || return 1
  tr '\0' ' ' <"/proc/$pid/cmdline" | grep -qF -- "$marker"
}

port_open() {
  timeout 1 bash -c "exec 3<>/dev/tcp/127.0.0.1/$1" 2>/dev/null
}

# Stops the processes of several pid files at once (SIGTERM to all, then waits up to grace seconds
# in all before SIGKILL) and removes the files; the cluster scripts' stop. name_fn and marker_fn
# map a pid file to its log name and to the command-line marker pid_alive checks.
#   stop_pid_files_together <grace seconds> <name_fn> <marker_fn> <pid file>...
stop_pid_files_together() {
  local grace="$1" name_fn="$2" marker_fn="$3" file pid pids=() waited=0
  shift 3
  for file in "$@"; do
    [[ -e "$file" ]] || continue
    if pid_alive "$file" "$("$marker_fn" "$file")"; then
      pid="$(cat "$file")"
      say "stopping $("$name_fn" "$file") (pid $pid)"
      kill -TERM "$pid" 2>/dev/null || true
      pids+=("$pid")
    fi
    rm -f "$file"
  done
  for pid in "${pids[@]}"; do
    while kill -0 "$pid" 2>/dev/null && ((waited < grace * 5)); do
      sleep 0.2
      waited=$((waited + 1))
    done
    if kill -0 "$pid" 2>/dev/null; then
      say "pid $pid did not stop in ${grace}s; killing it"
      kill -KILL "$pid" 2>/dev/null || true
    fi
  done
  return 0
}
