# The Redis Cluster of the local stack (sourced by stack-up.sh with --redis-cluster and by
# stack-down.sh, not run): six redis-server processes on loopback, three primaries and one replica
# each, made with `redis-cli --cluster create --cluster-replicas 1`.
#
# Node n (1..6) listens on STREAMFENCE_REDIS_CLUSTER_PORT + n - 1 (default 6401-6406) and on the
# cluster bus at STREAMFENCE_REDIS_CLUSTER_BUS_PORT + n - 1 (default the client port + 10000, as
# Redis itself picks). State under $STACK_DIR/redis-cluster/<port>/, pid in
# $STACK_DIR/redis-cluster/<port>.pid. Running stack-up again restarts only the nodes that are not
# running; they rejoin from their nodes.conf (a killed primary comes back as its successor's replica).
#
# Settings that matter for the monitor's guarantees:
#   appendonly yes, appendfsync everysec  a node that restarts keeps all but about its last second
#   cluster-node-timeout 2000             a dead primary is marked failed after about 2 s
#   cluster-replica-validity-factor 0     a replica always takes over, however long it was cut off
#                                         (else a long-partitioned replica refuses and the slots stay down)
#   cluster-require-full-coverage no      the other primaries keep serving their slots during a failover

REDIS_CLUSTER_NODES=6
REDIS_CLUSTER_PORT="${STREAMFENCE_REDIS_CLUSTER_PORT:-6401}"
REDIS_CLUSTER_BUS_PORT="${STREAMFENCE_REDIS_CLUSTER_BUS_PORT:-$((REDIS_CLUSTER_PORT + 10000))}"
REDIS_CLUSTER_DIR="$STACK_DIR/redis-cluster"

redis_cluster_port() { echo $((REDIS_CLUSTER_PORT + $1 - 1)); }
redis_cluster_pid_file() { echo "$REDIS_CLUSTER_DIR/$1.pid"; }
# redis-server's process title: "redis-server 127.0.0.1:<port> [cluster]".
redis_cluster_marker() { echo "127.0.0.1:$1 [cluster]"; }

redis_cluster_url() {
  local n list=()
  for n in $(seq 1 "$REDIS_CLUSTER_NODES"); do list+=("127.0.0.1:$(redis_cluster_port "$n")"); done
  echo "redis+cluster://$(IFS=,; echo "${list[*]}")"
}

redis_cluster_cli() { redis-cli -h 127.0.0.1 -p "$1" "${@:2}"; }

# "yes" when every node reports cluster_state:ok, knows all six nodes, and each primary has its replica.
redis_cluster_healthy() {
  local n port info primaries=0 replicas=0
  for n in $(seq 1 "$REDIS_CLUSTER_NODES"); do
    port="$(redis_cluster_port "$n")"
    info="$(redis_cluster_cli "$port" cluster info 2>/dev/null)" || return 1
    grep -q '^cluster_state:ok' <<<"$info" || return 1
    grep -q "^cluster_known_nodes:$REDIS_CLUSTER_NODES" <<<"$info" || return 1
    case "$(redis_cluster_cli "$port" role 2>/dev/null | head -n 1)" in
      master) primaries=$((primaries + 1)) ;;
      slave) replicas=$((replicas + 1)) ;;
    esac
  done
  ((primaries == 3 && replicas == 3))
}

start_redis_cluster_node() {
  local port="$1" bus="$2" dir="$REDIS_CLUSTER_DIR/$1"
  mkdir -p "$dir"
  redis-server --bind 127.0.0.1 --port "$port" --daemonize yes --dir "$dir" \
    --pidfile "$(redis_cluster_pid_file "$port")" --logfile "$dir/redis.log" \
    --cluster-enabled yes --cluster-config-file nodes.conf --cluster-port "$bus" \
    --cluster-node-timeout 2000 --cluster-replica-validity-factor 0 --cluster-require-full-coverage no \
    --appendonly yes --appendfsync everysec --save "" 8>&- 9>&- ||
    die "redis-server (cluster node on port $port) failed to start; see $dir/redis.log"
}

start_redis_cluster() {
  command -v redis-server >/dev/null 2>&1 && command -v redis-cli >/dev/null 2>&1 ||
    die "--redis-cluster needs redis-server and redis-cli on PATH (Debian: apt-get install -y redis-server)"
  mkdir -p "$REDIS_CLUSTER_DIR"
  local n p port bus fresh=0 started=0 seeds=()
  for n in $(seq 1 "$REDIS_CLUSTER_NODES"); do
    port="$(redis_cluster_port "$n")"
    bus=$((REDIS_CLUSTER_BUS_PORT + n - 1))
    seeds+=("127.0.0.1:$port")
    [[ -f "$REDIS_CLUSTER_DIR/$port/nodes.conf" ]] || fresh=$((fresh + 1))
    if pid_alive "$(redis_cluster_pid_file "$port")" "$(redis_cluster_marker "$port")"; then continue; fi
    rm -f "$(redis_cluster_pid_file "$port")"
    for p in "$port" "$bus"; do
      port_open "$p" && die "port $p (Redis Cluster node $n) is taken; set STREAMFENCE_REDIS_CLUSTER_PORT (and STREAMFENCE_REDIS_CLUSTER_BUS_PORT) to free ranges of $REDIS_CLUSTER_NODES ports"
    done
    start_redis_cluster_node "$port" "$bus"
    started=$((started + 1))
  done
  for n in $(seq 1 "$REDIS_CLUSTER_NODES"); do
    port="$(redis_cluster_port "$n")"
    for _ in $(seq 1 50); do
      redis_cluster_cli "$port" ping >/dev/null 2>&1 && break
      sleep 0.2
    done
    redis_cluster_cli "$port" ping >/dev/null 2>&1 ||
      die "Redis Cluster node on port $port does not answer; see $REDIS_CLUSTER_DIR/$port/redis.log"
  done
  if ((fresh == REDIS_CLUSTER_NODES)); then
    say "creating a Redis Cluster of 3 primaries and 3 replicas on ${seeds[0]}..${seeds[-1]}"
    redis-cli --cluster create "${seeds[@]}" --cluster-replicas 1 --cluster-yes \
      >"$STACK_DIR/logs/redis-cluster-create.log" 2>&1 ||
      die "redis-cli --cluster create failed; see $STACK_DIR/logs/redis-cluster-create.log"
  elif ((fresh > 0)); then
    die "$fresh of the Redis Cluster's nodes have no nodes.conf while the others do; 'npm run stack:down -- --wipe' and start again"
  fi
  # The nodes agree by gossip (a restarted primary is demoted, replicas resync): wait for all of it.
  for _ in $(seq 1 150); do
    redis_cluster_healthy && break
    sleep 0.2
  done
  redis_cluster_healthy ||
    die "the Redis Cluster did not become healthy (3 primaries, 3 replicas, cluster_state:ok); logs in $REDIS_CLUSTER_DIR/<port>/redis.log"
  ((started == 0)) && say "Redis Cluster already running on ${seeds[0]}..${seeds[-1]}"
  REDIS_CLUSTER_URL="$(redis_cluster_url)"
  REDIS_CLUSTER_OWNED=yes
}

# Stops every node this folder started (found by pid file), whichever arguments stack-down got.
stop_redis_cluster() {
  local file port pids=() pid
  for file in "$REDIS_CLUSTER_DIR"/*.pid; do
    [[ -e "$file" ]] || continue
    port="$(basename "$file" .pid)"
    if pid_alive "$file" "$(redis_cluster_marker "$port")"; then
      pid="$(cat "$file")"
      say "stopping Redis Cluster node on port $port (pid $pid)"
      kill -TERM "$pid" 2>/dev/null || true
      pids+=("$pid")
    fi
    rm -f "$file"
  done
  local waited=0
  for pid in "${pids[@]}"; do
    while kill -0 "$pid" 2>/dev/null && ((waited < 50)); do
      sleep 0.2
      waited=$((waited + 1))
    done
    kill -0 "$pid" 2>/dev/null && kill -KILL "$pid" 2>/dev/null
  done
  return 0
}

wipe_redis_cluster() {
  [[ -d "$REDIS_CLUSTER_DIR" ]] || return 0
  say "wiping $REDIS_CLUSTER_DIR"
  rm -rf "$REDIS_CLUSTER_DIR"
}
