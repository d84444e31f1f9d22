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
#
# With --redis-cluster-tls the nodes listen with TLS only (no plain port; the cluster bus and
# replication over TLS too) with the secure stack's certificates and ACL users (secure.sh: made
# under $STACK_DIR/secure/ if missing): default off, admin (everything; replicas authenticate as
# admin), monitor (keys sf*/{sf*), reader (read only). The mode is kept in redis-cluster/mode: a
# folder made in one mode is not restarted in the other (wipe first).

REDIS_CLUSTER_NODES=6
REDIS_CLUSTER_PORT="${STREAMFENCE_REDIS_CLUSTER_PORT:-6401}"
REDIS_CLUSTER_BUS_PORT="${STREAMFENCE_REDIS_CLUSTER_BUS_PORT:-$((REDIS_CLUSTER_PORT + 10000))}"
REDIS_CLUSTER_DIR="$STACK_DIR/redis-cluster"
REDIS_CLUSTER_MODE_FILE="$REDIS_CLUSTER_DIR/mode"
REDIS_CLUSTER_MODE=plain
[[ "${STACK_REDIS_CLUSTER_TLS:-no}" == yes ]] && REDIS_CLUSTER_MODE=tls

redis_cluster_port() { echo $((REDIS_CLUSTER_PORT + $1 - 1)); }
redis_cluster_pid_file() { echo "$REDIS_CLUSTER_DIR/$1.pid"; }
# redis-server's process title: "redis-server 127.0.0.1:<port> [cluster]".
redis_cluster_marker() { echo "127.0.0.1:$1 [cluster]"; }

redis_cluster_url() {
  local n list=() scheme=redis+cluster
  [[ "$REDIS_CLUSTER_MODE" == tls ]] && scheme=rediss+cluster
  for n in $(seq 1 "$REDIS_CLUSTER_NODES"); do list+=("127.0.0.1:$(redis_cluster_port "$n")"); done
  echo "$scheme://$(IFS=,; echo "${list[*]}")"
}

# redis-cli as the cluster's admin: in tls mode over TLS as user admin (the password through the
# environment, never in argv).
redis_cluster_redis_cli() {
  if [[ "$REDIS_CLUSTER_MODE" == tls ]]; then
    REDISCLI_AUTH="$(secret admin)" redis-cli --tls --cacert "$SECURE_TLS_DIR/ca.pem" --user admin "$@"
  else
    redis-cli "$@"
  fi
}
redis_cluster_cli() { redis_cluster_redis_cli -h 127.0.0.1 -p "$1" "${@:2}"; }

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

# One node's settings as a config file (it may hold the replication password: owner-only).
write_redis_cluster_node_config() {
  local port="$1" bus="$2" dir="$REDIS_CLUSTER_DIR/$1"
  (
    umask 077
    cat <<CONF
bind 127.0.0.1
daemonize yes
dir $dir
pidfile $(redis_cluster_pid_file "$port")
logfile $dir/redis.log
cluster-enabled yes
cluster-config-file nodes.conf
cluster-port $bus
cluster-node-timeout 2000
cluster-replica-validity-factor 0
cluster-require-full-coverage no
appendonly yes
appendfsync everysec
save ""
CONF
    if [[ "$REDIS_CLUSTER_MODE" == tls ]]; then
      cat <<CONF
port 0
tls-port $port
tls-cluster yes
tls-replication yes
tls-cert-file $SECURE_TLS_DIR/server.pem
tls-key-file $SECURE_TLS_DIR/server.key
tls-ca-cert-file $SECURE_TLS_DIR/ca.pem
tls-auth-clients no
aclfile $REDIS_CLUSTER_DIR/users.acl
masteruser admin
masterauth $(secret admin)
CONF
    else
      echo "port $port"
    fi
  ) >"$dir/node.conf"
}

start_redis_cluster_node() {
  local port="$1" bus="$2" dir="$REDIS_CLUSTER_DIR/$1"
  mkdir -p "$dir"
  write_redis_cluster_node_config "$port" "$bus"
  redis-server "$dir/node.conf" 8>&- 9>&- ||
    die "redis-server (cluster node on port $port) failed to start; see $dir/redis.log"
}

# The mode this folder's cluster was made in; a folder is never restarted in the other one.
check_redis_cluster_mode() {
  local made
  made="$(cat "$REDIS_CLUSTER_MODE_FILE" 2>/dev/null || true)"
  if [[ -n "$made" && "$made" != "$REDIS_CLUSTER_MODE" ]]; then
    die "this stack folder's Redis Cluster was made with $([[ "$made" == tls ]] && echo --redis-cluster-tls || echo --redis-cluster); start it the same way, or 'npm run stack:down -- --wipe' first"
  fi
  echo "$REDIS_CLUSTER_MODE" >"$REDIS_CLUSTER_MODE_FILE"
  if [[ "$REDIS_CLUSTER_MODE" == tls ]]; then
    source "$LOCAL_DIR/secure.sh"
    make_secrets
    make_tls
    write_secure_redis_acl "$REDIS_CLUSTER_DIR/users.acl" "+cluster|slots +cluster|shards +cluster|info"
  fi
}

start_redis_cluster() {
  command -v redis-server >/dev/null 2>&1 && command -v redis-cli >/dev/null 2>&1 ||
    die "--redis-cluster needs redis-server and redis-cli on PATH (Debian: apt-get install -y redis-server)"
  mkdir -p "$REDIS_CLUSTER_DIR"
  check_redis_cluster_mode
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
    redis_cluster_redis_cli --cluster create "${seeds[@]}" --cluster-replicas 1 --cluster-yes \
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

# The env file's lines for a TLS cluster: the monitor user for the commands (as the secure stack's
# secure.env names them), reader for inspect, admin for tests' own checks. None for a plain one.
redis_cluster_env_lines() {
  [[ "$REDIS_CLUSTER_MODE" == tls ]] || return 0
  cat <<ENV
STREAMFENCE_REDIS_USERNAME=monitor
STREAMFENCE_REDIS_PASSWORD_FILE=$SECRETS_DIR/monitor.pw
STREAMFENCE_REDIS_CA_FILE=$SECURE_TLS_DIR/ca.pem
STREAMFENCE_READER_REDIS_USERNAME=reader
STREAMFENCE_READER_REDIS_PASSWORD_FILE=$SECRETS_DIR/reader.pw
STREAMFENCE_ADMIN_REDIS_USERNAME=admin
STREAMFENCE_ADMIN_REDIS_PASSWORD_FILE=$SECRETS_DIR/admin.pw
ENV
}

# Stops every node this folder started (found by pid file), whichever arguments stack-down got.
redis_cluster_node_name() { echo "Redis Cluster node on port $(basename "$1" .pid)"; }
redis_cluster_node_marker() { redis_cluster_marker "$(basename "$1" .pid)"; }
stop_redis_cluster() {
  stop_pid_files_together 10 redis_cluster_node_name redis_cluster_node_marker "$REDIS_CLUSTER_DIR"/*.pid
}

wipe_redis_cluster() {
  [[ -d "$REDIS_CLUSTER_DIR" ]] || return 0
  say "wiping $REDIS_CLUSTER_DIR"
  rm -rf "$REDIS_CLUSTER_DIR"
}
