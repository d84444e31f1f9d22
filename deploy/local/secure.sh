# The secured local stack (sourced by stack-up.sh / stack-down.sh with --secure, not run):
#   Kafka: SASL_SSL client listener (SCRAM-SHA-512 users created at storage format time, TLS
#          certificate signed by a CA made here), StandardAuthorizer with prefixed ACLs.
#   Redis: TLS port only (no plain port), ACL users, default user off.
# Keys, certificates and passwords stay under $SECURE_DIR (inside .stack/, outside git).
# Users: admin (Kafka super user, Redis all keys), monitor (least privilege), operator (alerts and
# actions), reader (Redis read-only, for inspect). Environment for each in $SECURE_ENV_FILE.

SECURE_DIR="$STACK_DIR/secure"
SECURE_KAFKA_PORT="${STREAMFENCE_SECURE_KAFKA_PORT:-19092}"
SECURE_CONTROLLER_PORT="${STREAMFENCE_SECURE_CONTROLLER_PORT:-19093}"
SECURE_REDIS_PORT="${STREAMFENCE_SECURE_REDIS_PORT:-16390}"
SECURE_KAFKA_DIR="$SECURE_DIR/kafka"
SECURE_REDIS_DIR="$SECURE_DIR/redis"
SECURE_TLS_DIR="$SECURE_DIR/tls"
SECRETS_DIR="$SECURE_DIR/secrets"
SECURE_KAFKA_PID_FILE="$SECURE_KAFKA_DIR/kafka.pid"
SECURE_REDIS_PID_FILE="$SECURE_REDIS_DIR/redis.pid"
SECURE_ENV_FILE="$STACK_DIR/secure.env"
SECURE_USERS=(admin monitor operator reader)

# A random password per user, made once and kept: Kafka's SCRAM credentials are written at format time.
make_secrets() {
  mkdir -p "$SECRETS_DIR"
  chmod 700 "$SECRETS_DIR"
  local u
  for u in "${SECURE_USERS[@]}" keystore; do
    [[ -s "$SECRETS_DIR/$u.pw" ]] && continue
    (umask 077 && openssl rand -hex 18 >"$SECRETS_DIR/$u.pw")
  done
}
secret() { cat "$SECRETS_DIR/$1.pw"; }

# A CA and a server certificate for 127.0.0.1/localhost, made with openssl; PKCS12 keystore for Kafka.
make_tls() {
  [[ -s "$SECURE_TLS_DIR/truststore.p12" ]] && return
  need openssl "install openssl; it makes the secure stack's CA"
  mkdir -p "$SECURE_TLS_DIR"
  chmod 700 "$SECURE_TLS_DIR"
  (
    cd "$SECURE_TLS_DIR"
    umask 077
    openssl req -x509 -newkey rsa:2048 -nodes -days 825 -subj "/CN=streamfence local CA" \
      -keyout ca.key -out ca.pem
    openssl req -newkey rsa:2048 -nodes -subj "/CN=127.0.0.1" -keyout server.key -out server.csr
    printf 'subjectAltName=IP:127.0.0.1,DNS:localhost\nextendedKeyUsage=serverAuth,clientAuth\n' >ext.cnf
    openssl x509 -req -in server.csr -CA ca.pem -CAkey ca.key -CAcreateserial -days 825 \
      -extfile ext.cnf -out server.pem
    openssl pkcs12 -export -in server.pem -inkey server.key -certfile ca.pem -name server \
      -out server.p12 -passout "pass:$(secret keystore)"
    # The broker trusts the CA too: it is its own client on the SASL_SSL inter-broker listener.
    keytool -importcert -noprompt -alias ca -file ca.pem -keystore truststore.p12 -storetype PKCS12 \
      -storepass "$(secret keystore)"
    chmod 644 ca.pem
  ) >"$SECURE_DIR/tls.log" 2>&1 || die "making the secure stack's certificates failed; see $SECURE_DIR/tls.log"
}

write_secure_kafka_config() {
  mkdir -p "$SECURE_KAFKA_DIR/logs"
  (
    umask 077
    cat >"$SECURE_KAFKA_DIR/server.properties" <<PROPS
process.roles=broker,controller
node.id=1
controller.quorum.voters=1@127.0.0.1:$SECURE_CONTROLLER_PORT
listeners=SASL_SSL://127.0.0.1:$SECURE_KAFKA_PORT,CONTROLLER://127.0.0.1:$SECURE_CONTROLLER_PORT
advertised.listeners=SASL_SSL://127.0.0.1:$SECURE_KAFKA_PORT
listener.security.protocol.map=SASL_SSL:SASL_SSL,CONTROLLER:PLAINTEXT
controller.listener.names=CONTROLLER
inter.broker.listener.name=SASL_SSL
sasl.enabled.mechanisms=SCRAM-SHA-512
sasl.mechanism.inter.broker.protocol=SCRAM-SHA-512
listener.name.sasl_ssl.scram-sha-512.sasl.jaas.config=org.apache.kafka.common.security.scram.ScramLoginModule required username="admin" password="$(secret admin)";
ssl.keystore.type=PKCS12
ssl.keystore.location=$SECURE_TLS_DIR/server.p12
ssl.keystore.password=$(secret keystore)
ssl.truststore.type=PKCS12
ssl.truststore.location=$SECURE_TLS_DIR/truststore.p12
ssl.truststore.password=$(secret keystore)
ssl.client.auth=none
authorizer.class.name=org.apache.kafka.metadata.authorizer.StandardAuthorizer
allow.everyone.if.no.acl.found=false
# ANONYMOUS is the broker talking to its own controller over the loopback-only controller listener.
super.users=User:admin;User:ANONYMOUS
log.dirs=$SECURE_KAFKA_DIR/data
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
  )
}

start_secure_kafka() {
  if pid_alive "$SECURE_KAFKA_PID_FILE" "$SECURE_KAFKA_DIR/server.properties"; then
    say "secure Kafka already running (pid $(cat "$SECURE_KAFKA_PID_FILE")) on 127.0.0.1:$SECURE_KAFKA_PORT"
    return
  fi
  rm -f "$SECURE_KAFKA_PID_FILE"
  local p
  for p in "$SECURE_KAFKA_PORT" "$SECURE_CONTROLLER_PORT"; do
    port_open "$p" && die "port $p is taken; set STREAMFENCE_SECURE_KAFKA_PORT / STREAMFENCE_SECURE_CONTROLLER_PORT"
  done
  need java "install Java 17 (Debian: apt-get install -y openjdk-17-jre-headless)"
  fetch_kafka_jars
  write_secure_kafka_config
  if [[ ! -f "$SECURE_KAFKA_DIR/data/meta.properties" ]]; then
    local cluster_id args=() u
    for u in admin monitor operator; do args+=(--add-scram "SCRAM-SHA-512=[name=$u,password=$(secret "$u")]"); done
    cluster_id="$(kafka_java kafka.tools.StorageTool random-uuid 2>>"$SECURE_KAFKA_DIR/logs/format.log")"
    kafka_java kafka.tools.StorageTool format --ignore-formatted -t "$cluster_id" \
      -c "$SECURE_KAFKA_DIR/server.properties" "${args[@]}" >>"$SECURE_KAFKA_DIR/logs/format.log" 2>&1 ||
      die "formatting the secure Kafka storage failed; see $SECURE_KAFKA_DIR/logs/format.log"
  fi
  say "starting secure Kafka (SASL_SSL, SCRAM-SHA-512, ACLs) on 127.0.0.1:$SECURE_KAFKA_PORT"
  setsid java "${KAFKA_JVM_OPTS[@]/$KAFKA_DIR/$SECURE_KAFKA_DIR}" kafka.Kafka "$SECURE_KAFKA_DIR/server.properties" \
    >"$SECURE_KAFKA_DIR/logs/kafka.out" 2>&1 </dev/null 8>&- 9>&- &
  echo $! >"$SECURE_KAFKA_PID_FILE"
}

# Waits for the secure broker as admin, then grants the ACLs (idempotent: creating an existing ACL is a no-op).
secure_kafka_ready() {
  node "$LOCAL_DIR/secure-acls.mjs" --brokers "127.0.0.1:$SECURE_KAFKA_PORT" --ca "$SECURE_TLS_DIR/ca.pem" \
    --admin-password-file "$SECRETS_DIR/admin.pw" --pid "$(cat "$SECURE_KAFKA_PID_FILE")" \
    --timeout "${STREAMFENCE_KAFKA_START_TIMEOUT:-120}" || {
    tail -n 20 "$SECURE_KAFKA_DIR/logs/kafka.out" "$SECURE_KAFKA_DIR/logs/server.log" >&2 2>/dev/null || true
    die "secure Kafka did not become ready; logs in $SECURE_KAFKA_DIR/logs"
  }
}

# The Redis ACL users, for the secure Redis and the TLS Redis Cluster (redis-cluster.sh), which adds
# the cluster commands its clients need as the second argument. Keys of the state prefix "sf..." and
# their hash-tagged form "{sf...": the monitor may read and write them and run the checkpoint
# script; reader may only read; default is off.
write_secure_redis_acl() {
  local file="$1" extra="${2:-}"
  (
    umask 077
    cat >"$file" <<ACL
user default off
user admin on >$(secret admin) ~* &* +@all
user monitor on >$(secret monitor) ~sf* ~{sf* resetchannels -@all +@read +@write +@scripting +@connection +@transaction -@dangerous +scan +info $extra
user reader on >$(secret reader) ~sf* ~{sf* resetchannels -@all +@read +@connection -@dangerous +scan +info $extra
ACL
  )
}

start_secure_redis() {
  mkdir -p "$SECURE_REDIS_DIR"
  if pid_alive "$SECURE_REDIS_PID_FILE" "redis-server"; then
    say "secure Redis already running (pid $(cat "$SECURE_REDIS_PID_FILE")) on rediss://127.0.0.1:$SECURE_REDIS_PORT"
    return
  fi
  port_open "$SECURE_REDIS_PORT" && die "port $SECURE_REDIS_PORT is taken; set STREAMFENCE_SECURE_REDIS_PORT"
  need redis-server "install redis-server (Debian: apt-get install -y redis-server)"
  write_secure_redis_acl "$SECURE_REDIS_DIR/users.acl"
  say "starting secure Redis (TLS only, ACL users) on rediss://127.0.0.1:$SECURE_REDIS_PORT"
  redis-server --bind 127.0.0.1 --port 0 --tls-port "$SECURE_REDIS_PORT" \
    --tls-cert-file "$SECURE_TLS_DIR/server.pem" --tls-key-file "$SECURE_TLS_DIR/server.key" \
    --tls-ca-cert-file "$SECURE_TLS_DIR/ca.pem" --tls-auth-clients no \
    --aclfile "$SECURE_REDIS_DIR/users.acl" --save "" --appendonly no --daemonize yes \
    --dir "$SECURE_REDIS_DIR" --pidfile "$SECURE_REDIS_PID_FILE" --logfile "$SECURE_REDIS_DIR/redis.log" 8>&- 9>&- ||
    die "secure redis-server failed to start; see $SECURE_REDIS_DIR/redis.log"
}

secure_env_block() {
  local prefix="$1" kuser="$2" ruser="$3"
  cat <<ENV
${prefix}BROKERS=127.0.0.1:$SECURE_KAFKA_PORT
${prefix}KAFKA_TLS=true
${prefix}KAFKA_CA_FILE=$SECURE_TLS_DIR/ca.pem
${prefix}KAFKA_SASL_MECHANISM=scram-sha-512
${prefix}KAFKA_SASL_USERNAME=$kuser
${prefix}KAFKA_SASL_PASSWORD_FILE=$SECRETS_DIR/$kuser.pw
${prefix}REDIS_URL=rediss://127.0.0.1:$SECURE_REDIS_PORT
${prefix}REDIS_USERNAME=$ruser
${prefix}REDIS_PASSWORD_FILE=$SECRETS_DIR/$ruser.pw
${prefix}REDIS_CA_FILE=$SECURE_TLS_DIR/ca.pem
ENV
}

write_secure_env() {
  local tmp="$SECURE_ENV_FILE.tmp.$$"
  {
    echo "# Written by deploy/local/stack-up.sh --secure. Shell-sourceable: set -a; . $SECURE_ENV_FILE; set +a"
    echo "# STREAMFENCE_*: the monitor user; STREAMFENCE_ADMIN_*: super user; STREAMFENCE_OPERATOR_*: operator."
    secure_env_block STREAMFENCE_ monitor monitor
    secure_env_block STREAMFENCE_ADMIN_ admin admin
    secure_env_block STREAMFENCE_OPERATOR_ operator monitor
    echo "STREAMFENCE_READER_REDIS_USERNAME=reader"
    echo "STREAMFENCE_READER_REDIS_PASSWORD_FILE=$SECRETS_DIR/reader.pw"
  } >"$tmp"
  mv "$tmp" "$SECURE_ENV_FILE"
}

start_secure_stack() {
  make_secrets
  make_tls
  start_secure_kafka
  start_secure_redis
  secure_kafka_ready
  node "$LOCAL_DIR/ping-redis.mjs" "rediss://127.0.0.1:$SECURE_REDIS_PORT" 5 "$SECURE_TLS_DIR/ca.pem" admin "$SECRETS_DIR/admin.pw" >/dev/null ||
    die "secure Redis does not answer over TLS; see $SECURE_REDIS_DIR/redis.log"
  write_secure_env
}

stop_secure_stack() {
  stop_pid_file "secure Kafka" "$SECURE_KAFKA_PID_FILE" "$SECURE_KAFKA_DIR/server.properties" 30
  stop_pid_file "secure Redis" "$SECURE_REDIS_PID_FILE" redis-server 10
  rm -f "$SECURE_ENV_FILE"
}
