# The three-broker Kafka of the local stack (sourced by stack-up.sh / stack-down.sh with --brokers 3,
# not run): three combined broker+controller KRaft nodes on loopback with a three-voter controller
# quorum, so one broker can die and the cluster keeps a leader for every partition and a controller.
# Topics created without a replication factor get 3 replicas and need 2 in sync (min.insync.replicas),
# so an acks=all write survives one broker down and is refused, never half-written, with two down.
#
# Node n (1..3) listens for clients on STREAMFENCE_KAFKA_PORT + n - 1 (9092-9094) and for the quorum on
# STREAMFENCE_KAFKA_CONTROLLER_PORT + n - 1 (default: the client port + 100, 9192-9194, so the
# one-broker default 9093 cannot collide). State under $STACK_DIR/kafka-<n>/, pid in
# $STACK_DIR/kafka-<n>.pid. Running stack-up again restarts only the nodes that are not running.

CLUSTER_CONTROLLER_BASE="${STREAMFENCE_KAFKA_CONTROLLER_PORT:-$((KAFKA_PORT + 100))}"
CLUSTER_ID_FILE="$STACK_DIR/kafka-cluster.id"

cluster_dir() { echo "$STACK_DIR/kafka-$1"; }
cluster_pid_file() { echo "$STACK_DIR/kafka-$1.pid"; }
cluster_client_port() { echo $((KAFKA_PORT + $1 - 1)); }
cluster_controller_port() { echo $((CLUSTER_CONTROLLER_BASE + $1 - 1)); }

cluster_brokers() {
  local n list=()
  for n in $(seq 1 "$STACK_BROKERS"); do list+=("127.0.0.1:$(cluster_client_port "$n")"); done
  (IFS=,; echo "${list[*]}")
}

cluster_check_ports() {
  local last_client=$((KAFKA_PORT + STACK_BROKERS - 1)) last_controller=$((CLUSTER_CONTROLLER_BASE + STACK_BROKERS - 1))
  if ((CLUSTER_CONTROLLER_BASE <= last_client && KAFKA_PORT <= last_controller)); then
    die "client ports $KAFKA_PORT-$last_client and controller ports $CLUSTER_CONTROLLER_BASE-$last_controller overlap; set STREAMFENCE_KAFKA_CONTROLLER_PORT apart from STREAMFENCE_KAFKA_PORT"
  fi
}

write_cluster_config() {
  local n="$1" dir voters=() m
  dir="$(cluster_dir "$n")"
  for m in $(seq 1 "$STACK_BROKERS"); do voters+=("$m@127.0.0.1:$(cluster_controller_port "$m")"); done
  mkdir -p "$dir/logs"
  # Replication settings are the point of this stack: 3 replicas, 2 in sync for an acks=all write,
  # the internal topics (consumer offsets, producer state) replicated the same way, no unclean
  # leader election (a replica that missed writes never becomes leader). Failure detection keeps
  # Kafka's defaults, so the measured failover pause is the one a plant's cluster would show.
  cat >"$dir/server.properties" <<PROPS
process.roles=broker,controller
node.id=$n
controller.quorum.voters=$(IFS=,; echo "${voters[*]}")
listeners=PLAINTEXT://127.0.0.1:$(cluster_client_port "$n"),CONTROLLER://127.0.0.1:$(cluster_controller_port "$n")
advertised.listeners=PLAINTEXT://127.0.0.1:$(cluster_client_port "$n")
listener.security.protocol.map=PLAINTEXT:PLAINTEXT,CONTROLLER:PLAINTEXT
controller.listener.names=CONTROLLER
inter.broker.listener.name=PLAINTEXT
log.dirs=$dir/data
auto.create.topics.enable=false
num.partitions=1
default.replication.factor=$STACK_BROKERS
min.insync.replicas=2
unclean.leader.election.enable=false
offsets.topic.replication.factor=$STACK_BROKERS
offsets.topic.num.partitions=3
transaction.state.log.replication.factor=$STACK_BROKERS
transaction.state.log.min.isr=2
transaction.state.log.num.partitions=3
group.initial.rebalance.delay.ms=0
delete.topic.enable=true
log.retention.hours=24
log.segment.bytes=16777216
PROPS
}

start_kafka_cluster() {
  local n dir pid_file pids=() starting=()
  if pid_alive "$KAFKA_PID_FILE" "$KAFKA_DIR/server.properties"; then
    die "this stack folder ($STACK_DIR) runs a one-broker Kafka (pid $(cat "$KAFKA_PID_FILE")); stop it first with 'npm run stack:down', or use another STREAMFENCE_STACK_DIR"
  fi
  cluster_check_ports
  for n in $(seq 1 "$STACK_BROKERS"); do
    dir="$(cluster_dir "$n")"
    pid_file="$(cluster_pid_file "$n")"
    if pid_alive "$pid_file" "$dir/server.properties"; then continue; fi
    rm -f "$pid_file"
    local p
    for p in "$(cluster_client_port "$n")" "$(cluster_controller_port "$n")"; do
      port_open "$p" && die "port $p (Kafka node $n) is taken; set STREAMFENCE_KAFKA_PORT / STREAMFENCE_KAFKA_CONTROLLER_PORT to free ranges of $STACK_BROKERS ports"
    done
    starting+=("$n")
  done

  if ((${#starting[@]} > 0)); then
    need java "install Java 17 (Debian: apt-get install -y openjdk-17-jre-headless)"
    fetch_kafka_jars
    # One cluster id for every node, made once: a node formatted with another id would never join.
    if [[ ! -s "$CLUSTER_ID_FILE" ]]; then
      kafka_java kafka.tools.StorageTool random-uuid >"$CLUSTER_ID_FILE.tmp" 2>>"$STACK_DIR/logs/format.log"
      mv "$CLUSTER_ID_FILE.tmp" "$CLUSTER_ID_FILE"
    fi
    for n in "${starting[@]}"; do
      dir="$(cluster_dir "$n")"
      write_cluster_config "$n"
      if [[ ! -f "$dir/data/meta.properties" ]]; then
        kafka_java kafka.tools.StorageTool format --ignore-formatted -t "$(cat "$CLUSTER_ID_FILE")" \
          -c "$dir/server.properties" >>"$dir/logs/format.log" 2>&1 ||
          die "formatting Kafka node $n's storage failed; see $dir/logs/format.log"
      fi
    done
    # All at once: a node waits for a quorum majority before it serves, so starting them one by one
    # would only add the waits up.
    for n in "${starting[@]}"; do
      dir="$(cluster_dir "$n")"
      say "starting Kafka $KAFKA_VERSION node $n on 127.0.0.1:$(cluster_client_port "$n") (controller 127.0.0.1:$(cluster_controller_port "$n"))"
      setsid java "${KAFKA_JVM_OPTS[@]/$KAFKA_DIR/$dir}" kafka.Kafka "$dir/server.properties" \
        >"$dir/logs/kafka.out" 2>&1 </dev/null 8>&- 9>&- &
      echo $! >"$(cluster_pid_file "$n")"
    done
  fi

  for n in $(seq 1 "$STACK_BROKERS"); do pids+=("$(cat "$(cluster_pid_file "$n")")"); done
  # Ready = every node registered and a 3-replica topic fully in sync, so a restarted node has caught up.
  if ! wait_kafka --expect-brokers "$STACK_BROKERS" --timeout "${STREAMFENCE_KAFKA_START_TIMEOUT:-120}" \
    --pid "$(IFS=,; echo "${pids[*]}")"; then
    for n in $(seq 1 "$STACK_BROKERS"); do
      tail -n 10 "$(cluster_dir "$n")/logs/kafka.out" "$(cluster_dir "$n")/logs/server.log" >&2 2>/dev/null || true
    done
    die "the $STACK_BROKERS-node Kafka did not become ready; logs in $STACK_DIR/kafka-<n>/logs"
  fi
  if ((${#starting[@]} == 0)); then say "Kafka already running: $STACK_BROKERS nodes on $KAFKA_BROKERS"; fi
  KAFKA_OWNED=yes
}

# Stops every node this folder started (found by pid file), all at once: stopped one by one, the
# last ones would wait for a controller quorum that is already gone.
kafka_cluster_node_of() {
  local n="${1##*/kafka-}"
  echo "${n%.pid}"
}
kafka_cluster_node_name() { echo "Kafka node $(kafka_cluster_node_of "$1")"; }
kafka_cluster_node_marker() { echo "$(cluster_dir "$(kafka_cluster_node_of "$1")")/server.properties"; }
stop_kafka_cluster() {
  stop_pid_files_together 30 kafka_cluster_node_name kafka_cluster_node_marker "$STACK_DIR"/kafka-*.pid
}

wipe_kafka_cluster() {
  local dir
  for dir in "$STACK_DIR"/kafka-[0-9]*; do
    [[ -d "$dir" ]] || continue
    say "wiping $dir"
    rm -rf "$dir"
  done
  rm -f "$CLUSTER_ID_FILE"
}
