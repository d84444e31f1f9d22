#!/usr/bin/env bash
# Bring up the local stack for development and tests: a real Kafka (KRaft, one node or, with
# --brokers 3, three; run from Maven Central jars) and Redis, plus with --redis-cluster a
# 3-primary, 3-replica Redis Cluster (deploy/local/redis-cluster.sh; --redis-cluster-tls: the same
# with TLS only and ACL users). Idempotent: a second run finds what is running and only re-checks it.
# Writes the addresses to $STACK_DIR/env for the test harness. See DEVELOPERS.md "Local stack".
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/common.sh"
parse_stack_args "$@"

started_at=$(date +%s.%N)
mkdir -p "$STACK_DIR/logs" "$KAFKA_DIR/logs" "$REDIS_DIR"
# One stack-up at a time per stack dir: parallel test runs would otherwise race to start two brokers.
# Every server started below closes fds 8 and 9 ("8>&- 9>&-"): a long-lived child holding the lock's
# descriptor would keep the lock, and the next stack-up would wait on it forever.
exec 8>"$STACK_DIR/.up.lock"
flock 8

need() {
  command -v "$1" >/dev/null 2>&1 || die "'$1' not found on PATH: $2"
}
need node "install Node.js 20"
[[ -d "$REPO_ROOT/node_modules/kafkajs" && -d "$REPO_ROOT/node_modules/ioredis" ]] ||
  die "node_modules is missing kafkajs/ioredis: run 'npm ci' in $REPO_ROOT first"

wait_kafka() { node "$LOCAL_DIR/wait-kafka.mjs" --brokers "$KAFKA_BROKERS" "$@"; }
ping_redis() { node "$LOCAL_DIR/ping-redis.mjs" "$@"; }

# ---------------------------------------------------------------- Kafka jars (cached, outside git)
fetch_kafka_jars() {
  local pom_sum
  pom_sum="$(sha256sum "$LOCAL_DIR/kafka/pom.xml" | cut -c1-16)"
  # The marker holds the pom's checksum, so editing the pom (a version bump) fetches again.
  if [[ "$(cat "$KAFKA_HOME/.complete" 2>/dev/null)" == "$pom_sum" ]]; then return; fi
  need mvn "install Maven (Debian: apt-get install -y maven); it fetches the Kafka broker jars"
  mkdir -p "$CACHE_DIR"
  # Two checkouts starting at once must not both write the cache.
  exec 9>"$CACHE_DIR/.fetch.lock"
  flock 9
  if [[ "$(cat "$KAFKA_HOME/.complete" 2>/dev/null)" != "$pom_sum" ]]; then
    say "fetching Kafka $KAFKA_VERSION jars with Maven into $KAFKA_HOME/lib (once; log: $STACK_DIR/logs/maven.log)"
    local tmp="$KAFKA_HOME.tmp.$$"
    rm -rf "$tmp"
    if ! (cd "$LOCAL_DIR/kafka" && mvn -q -B dependency:copy-dependencies \
      -DincludeScope=runtime -DoutputDirectory="$tmp/lib") >"$STACK_DIR/logs/maven.log" 2>&1; then
      tail -n 30 "$STACK_DIR/logs/maven.log" >&2
      rm -rf "$tmp"
      die "Maven could not fetch org.apache.kafka:kafka_2.13:$KAFKA_VERSION (is Maven Central reachable?)"
    fi
    rm -rf "$KAFKA_HOME"
    mv "$tmp" "$KAFKA_HOME"
    echo "$pom_sum" >"$KAFKA_HOME/.complete"
  fi
  exec 9>&-
}

write_kafka_config() {
  # auto.create.topics.enable=false: every topic a test or the monitor uses is created on purpose with a
  # known partition count, so a typo or a missing create fails loudly instead of making a 1-partition topic.
  cat >"$KAFKA_DIR/server.properties" <<PROPS
process.roles=broker,controller
node.id=1
controller.quorum.voters=1@127.0.0.1:$KAFKA_CONTROLLER_PORT
listeners=PLAINTEXT://127.0.0.1:$KAFKA_PORT,CONTROLLER://127.0.0.1:$KAFKA_CONTROLLER_PORT
advertised.listeners=PLAINTEXT://127.0.0.1:$KAFKA_PORT
listener.security.protocol.map=PLAINTEXT:PLAINTEXT,CONTROLLER:PLAINTEXT
controller.listener.names=CONTROLLER
inter.broker.listener.name=PLAINTEXT
log.dirs=$KAFKA_DIR/data
auto.create.topics.enable=false
num.partitions=1
offsets.topic.replication.factor=1
offsets.topic.num.partitions=3
transaction.state.log.replication.factor=1
transaction.state.log.min.isr=1
transaction.state.log.num.partitions=3
group.initial.rebalance.delay.ms=0
delete.topic.enable=true
log.retention.hours=24
log.segment.bytes=16777216
PROPS
}

# Serial GC and C1-only JIT: about a third less CPU to start on a shared 2-core machine; a test broker
# never needs peak throughput. STREAMFENCE_KAFKA_JVM_OPTS adds (or overrides) flags.
# shellcheck disable=SC2206
KAFKA_JVM_OPTS=(-Xms256m -Xmx512m -XX:+UseSerialGC -XX:TieredStopAtLevel=1 -XX:+ExitOnOutOfMemoryError
  -Djava.awt.headless=true ${STREAMFENCE_KAFKA_JVM_OPTS:-}
  "-Dlog4j.configuration=file:$LOCAL_DIR/kafka/log4j.properties" "-Dkafka.logs.dir=$KAFKA_DIR/logs"
  -cp "$KAFKA_HOME/lib/*")

kafka_java() { java "${KAFKA_JVM_OPTS[@]}" "$@"; }

start_kafka() {
  local n
  for n in $(seq 1 3); do
    if pid_alive "$STACK_DIR/kafka-$n.pid" "$STACK_DIR/kafka-$n/server.properties"; then
      die "this stack folder ($STACK_DIR) runs a three-broker Kafka; stop it first with 'npm run stack:down', or use --brokers 3"
    fi
  done
  if pid_alive "$KAFKA_PID_FILE" "$KAFKA_DIR/server.properties"; then
    # Ours and alive: it may still be starting, so wait rather than probe once.
    wait_kafka --timeout 60 --pid "$(cat "$KAFKA_PID_FILE")" >/dev/null ||
      die "our broker (pid $(cat "$KAFKA_PID_FILE")) is running but does not answer; see $KAFKA_DIR/logs/server.log, or 'npm run stack:down' and retry"
    say "Kafka already running (pid $(cat "$KAFKA_PID_FILE")) on $KAFKA_BROKERS"
    KAFKA_OWNED=yes
    return
  fi
  rm -f "$KAFKA_PID_FILE"
  if port_open "$KAFKA_PORT"; then
    # Something else listens there, e.g. the stack of another checkout. Reuse it when it speaks Kafka;
    # stack-down will leave it alone since we hold no pid file for it.
    if wait_kafka --probe >/dev/null 2>&1; then
      say "reusing the Kafka broker that already answers on $KAFKA_BROKERS (not started here; stack:down leaves it)"
      wait_kafka --timeout 30 >/dev/null || die "broker on $KAFKA_BROKERS answers metadata but cannot create a topic"
      KAFKA_OWNED=no
      return
    fi
    die "port $KAFKA_PORT is taken by something that is not a Kafka broker; set STREAMFENCE_KAFKA_PORT to a free port"
  fi
  if port_open "$KAFKA_CONTROLLER_PORT"; then
    die "Kafka controller port $KAFKA_CONTROLLER_PORT is taken; set STREAMFENCE_KAFKA_CONTROLLER_PORT to a free port"
  fi

  need java "install Java 17 (Debian: apt-get install -y openjdk-17-jre-headless)"
  fetch_kafka_jars
  write_kafka_config
  if [[ ! -f "$KAFKA_DIR/data/meta.properties" ]]; then
    local cluster_id
    cluster_id="$(kafka_java kafka.tools.StorageTool random-uuid 2>>"$KAFKA_DIR/logs/format.log")"
    kafka_java kafka.tools.StorageTool format --ignore-formatted -t "$cluster_id" \
      -c "$KAFKA_DIR/server.properties" >>"$KAFKA_DIR/logs/format.log" 2>&1 ||
      die "formatting Kafka storage failed; see $KAFKA_DIR/logs/format.log"
  fi

  say "starting Kafka $KAFKA_VERSION on $KAFKA_BROKERS (controller 127.0.0.1:$KAFKA_CONTROLLER_PORT)"
  # setsid: the broker outlives this script and is not hit by a Ctrl-C aimed at a test run. setsid execs
  # java in place (we are not a process-group leader), so $! is the broker's own pid.
  setsid java "${KAFKA_JVM_OPTS[@]}" kafka.Kafka "$KAFKA_DIR/server.properties" \
    >"$KAFKA_DIR/logs/kafka.out" 2>&1 </dev/null 8>&- 9>&- &
  echo $! >"$KAFKA_PID_FILE"
  if ! wait_kafka --timeout "${STREAMFENCE_KAFKA_START_TIMEOUT:-120}" --pid "$(cat "$KAFKA_PID_FILE")"; then
    tail -n 20 "$KAFKA_DIR/logs/kafka.out" "$KAFKA_DIR/logs/server.log" >&2 2>/dev/null || true
    die "Kafka did not become ready; logs in $KAFKA_DIR/logs"
  fi
  KAFKA_OWNED=yes
}

# ---------------------------------------------------------------- Redis
start_redis() {
  if ping_redis "$REDIS_URL_WANTED" 1 >/dev/null 2>&1; then
    REDIS_URL="$REDIS_URL_WANTED"
    REDIS_OWNED=no
    say "using Redis at $REDIS_URL (already running; not started here)"
    return
  fi
  REDIS_URL="redis://127.0.0.1:$OWN_REDIS_PORT"
  if pid_alive "$REDIS_PID_FILE" "redis-server" && ping_redis "$REDIS_URL" 2 >/dev/null 2>&1; then
    REDIS_OWNED=yes
    say "Redis already running (pid $(cat "$REDIS_PID_FILE")) at $REDIS_URL"
    return
  fi
  if ping_redis "$REDIS_URL" 1 >/dev/null 2>&1; then
    REDIS_OWNED=no
    say "reusing the Redis that answers at $REDIS_URL (not started here)"
    return
  fi
  if ! command -v redis-server >/dev/null 2>&1; then
    if [[ "$(id -u)" == 0 ]] && command -v apt-get >/dev/null 2>&1; then
      say "redis-server missing: installing it with apt-get"
      (apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq redis-server) \
        >"$STACK_DIR/logs/apt-redis.log" 2>&1 ||
        die "could not install redis-server with apt-get; see $STACK_DIR/logs/apt-redis.log"
    else
      die "no Redis answers at $REDIS_URL_WANTED and 'redis-server' is not installed (Debian: apt-get install -y redis-server), or set STREAMFENCE_REDIS_URL"
    fi
  fi
  say "starting redis-server on $REDIS_URL (append-only file, fsync every second)"
  redis-server --bind 127.0.0.1 --port "$OWN_REDIS_PORT" --save "" --appendonly yes --appendfsync everysec --daemonize yes \
    --dir "$REDIS_DIR" --pidfile "$REDIS_PID_FILE" --logfile "$REDIS_DIR/redis.log" 8>&- 9>&- ||
    die "redis-server failed to start; see $REDIS_DIR/redis.log"
  for _ in $(seq 1 50); do
    ping_redis "$REDIS_URL" 1 >/dev/null 2>&1 && break
    sleep 0.2
  done
  ping_redis "$REDIS_URL" 1 >/dev/null || die "redis-server started but does not answer; see $REDIS_DIR/redis.log"
  REDIS_OWNED=yes
}

if [[ "$STACK_SECURE" == yes ]]; then
  source "$LOCAL_DIR/secure.sh"
  start_secure_stack
  elapsed=$(awk -v s="$started_at" -v e="$(date +%s.%N)" 'BEGIN { printf "%.1f", e - s }')
  cat <<INFO
stack: secure stack up in ${elapsed}s
  Kafka brokers : 127.0.0.1:$SECURE_KAFKA_PORT   (SASL_SSL, SCRAM-SHA-512, ACLs; CA $SECURE_TLS_DIR/ca.pem)
  Redis URL     : rediss://127.0.0.1:$SECURE_REDIS_PORT   (TLS only, ACL users)
  env file      : $SECURE_ENV_FILE   (set -a; . $SECURE_ENV_FILE; set +a)
  users         : admin, monitor, operator (Kafka); admin, monitor, reader (Redis); passwords in $SECRETS_DIR
  stop          : npm run stack:down -- --secure
INFO
  exit 0
fi

if [[ "$STACK_BROKERS" == 1 ]]; then
  start_kafka
else
  source "$LOCAL_DIR/cluster.sh"
  KAFKA_BROKERS="$(cluster_brokers)"
  start_kafka_cluster
fi
start_redis
# With --redis-cluster the commands (STREAMFENCE_REDIS_URL) use the cluster; the test suite keeps its
# single Redis (STREAMFENCE_TEST_REDIS_URL): tests that need a cluster start their own.
REDIS_CLUSTER_URL=""
if [[ "$STACK_REDIS_CLUSTER" == yes ]]; then
  source "$LOCAL_DIR/redis-cluster.sh"
  start_redis_cluster
fi

tmp_env="$ENV_FILE.tmp.$$"
cat >"$tmp_env" <<ENV
# Written by deploy/local/stack-up.sh. Shell-sourceable: set -a; . $ENV_FILE; set +a
STREAMFENCE_TEST_BROKERS=$KAFKA_BROKERS
STREAMFENCE_TEST_REDIS_URL=$REDIS_URL
STREAMFENCE_BROKERS=$KAFKA_BROKERS
STREAMFENCE_REDIS_URL=${REDIS_CLUSTER_URL:-$REDIS_URL}
STREAMFENCE_STACK_KAFKA_OWNED=$KAFKA_OWNED
STREAMFENCE_STACK_REDIS_OWNED=$REDIS_OWNED
ENV
if [[ -n "$REDIS_CLUSTER_URL" ]]; then
  printf 'STREAMFENCE_STACK_REDIS_CLUSTER_URL=%s\n' "$REDIS_CLUSTER_URL" >>"$tmp_env"
  redis_cluster_env_lines >>"$tmp_env"
fi
mv "$tmp_env" "$ENV_FILE"

elapsed=$(awk -v s="$started_at" -v e="$(date +%s.%N)" 'BEGIN { printf "%.1f", e - s }')
cat <<INFO
stack: up in ${elapsed}s
  Kafka brokers : $KAFKA_BROKERS   (Kafka $KAFKA_VERSION, KRaft, $STACK_BROKERS node(s); topics are not auto-created)
  Redis URL     : $REDIS_URL$([[ -n "$REDIS_CLUSTER_URL" ]] && printf '\n  Redis Cluster : %s   (3 primaries, 3 replicas%s; STREAMFENCE_REDIS_URL in the env file)' "$REDIS_CLUSTER_URL" "$([[ "$REDIS_CLUSTER_MODE" == tls ]] && echo "; TLS only, ACL users admin, monitor, reader; CA $SECURE_TLS_DIR/ca.pem")")
  env file      : $ENV_FILE   (set -a; . $ENV_FILE; set +a)
  logs          : $([[ "$STACK_BROKERS" == 1 ]] && echo "$KAFKA_DIR/logs" || echo "$STACK_DIR/kafka-<n>/logs"), $REDIS_DIR (own Redis only), $([[ -n "$REDIS_CLUSTER_URL" ]] && echo "$STACK_DIR/redis-cluster/<port>, ")$STACK_DIR/logs
  stop          : npm run stack:down
INFO
