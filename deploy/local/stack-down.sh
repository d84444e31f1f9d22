#!/usr/bin/env bash
# Stop what stack-up.sh started in this checkout (found by pid files), nothing else: a reused broker or
# the machine's Redis keep running. Data stays for a fast next start; --wipe deletes it too.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/common.sh"
parse_stack_args "$@"

stop_pid_file() {
  local name="$1" file="$2" marker="$3" grace="$4" pid
  if ! pid_alive "$file" "$marker"; then
    rm -f "$file"
    return
  fi
  pid="$(cat "$file")"
  say "stopping $name (pid $pid)"
  kill -TERM "$pid" 2>/dev/null || true
  # Kafka's controlled shutdown takes a few seconds; escalate only after the grace period.
  for _ in $(seq 1 $((grace * 5))); do
    kill -0 "$pid" 2>/dev/null || break
    sleep 0.2
  done
  if kill -0 "$pid" 2>/dev/null; then
    say "$name did not stop in ${grace}s; killing it"
    kill -KILL "$pid" 2>/dev/null || true
  fi
  rm -f "$file"
}

if [[ "$STACK_SECURE" == yes ]]; then
  source "$LOCAL_DIR/secure.sh"
  stop_secure_stack
  if [[ "$STACK_WIPE" == yes ]]; then
    say "wiping $SECURE_DIR"
    rm -rf "$SECURE_DIR"
  fi
  say "secure stack down"
  exit 0
fi

stop_pid_file Kafka "$KAFKA_PID_FILE" "$KAFKA_DIR/server.properties" 30
# The three-broker Kafka (--brokers 3), whichever arguments stack-down got: its pid files say it ran.
source "$LOCAL_DIR/cluster.sh"
stop_kafka_cluster
stop_pid_file Redis "$REDIS_PID_FILE" redis-server 10
# The Redis Cluster (--redis-cluster), likewise found by its pid files.
source "$LOCAL_DIR/redis-cluster.sh"
stop_redis_cluster
rm -f "$ENV_FILE"

if [[ "$STACK_WIPE" == yes ]]; then
  say "wiping $KAFKA_DIR and $REDIS_DIR"
  rm -rf "$KAFKA_DIR" "$REDIS_DIR"
  wipe_kafka_cluster
  wipe_redis_cluster
fi
say "down"
