#!/usr/bin/env bash
# The test broker: one Apache Kafka node in KRaft mode (broker and controller in one JVM)
# on loopback, assembled from Maven Central jars, no tarball and no Docker. The version is
# SHARDWISE_KAFKA_VERSION (default 4.4.0; 3.9.1 is the other one the tests run against).
#
#   scripts/kafka-broker.sh start    assemble (once), format (once), start, wait until ready
#   scripts/kafka-broker.sh stop     SIGTERM, wait, SIGKILL; silent when not running
#   scripts/kafka-broker.sh status   exit 0 when running and reachable, 3 when not running
#   scripts/kafka-broker.sh reset    stop and delete the broker's data (topics, offsets)
#
# start and status print the bootstrap address as the last line of stdout; progress goes
# to stderr. See DEVELOPERS.md for the environment variables.
set -euo pipefail

readonly DEFAULT_KAFKA_VERSION=4.4.0
readonly KAFKA_VERSION="${SHARDWISE_KAFKA_VERSION:-$DEFAULT_KAFKA_VERSION}"
readonly REPO_ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"

say() { printf 'kafka-broker: %s\n' "$*" >&2; }
die() {
  say "error: $*"
  exit 1
}

# A bad version is a usage error (exit 2, as for a bad command), not a broker state.
if ! [[ "$KAFKA_VERSION" =~ ^([0-9]+)\.([0-9]+)\.([0-9]+)$ ]]; then
  say "error: SHARDWISE_KAFKA_VERSION=$KAFKA_VERSION is not a Kafka release number such as $DEFAULT_KAFKA_VERSION or 3.9.1"
  exit 2
fi
readonly KAFKA_MAJOR="${BASH_REMATCH[1]}"
# Kafka 3.3 made KRaft production-ready; older releases would need ZooKeeper.
if ((KAFKA_MAJOR < 3)); then
  say "error: SHARDWISE_KAFKA_VERSION=$KAFKA_VERSION: this script runs Kafka 3.x (3.9.1 is tested) and 4.x in KRaft mode only"
  exit 2
fi
# Kafka 4 logs through log4j2, runs on Java 17 and up, and formats a dynamic controller
# quorum (KIP-853, --standalone); 3.x logs through log4j 1 (reload4j) and takes static voters.
if ((KAFKA_MAJOR >= 4)); then
  readonly MIN_JAVA=17
else
  readonly MIN_JAVA=11
fi

readonly NEED_TOOLS='The Kafka tests need Java 17 and Maven (mvn) to assemble the test broker from Maven Central; install them (apt-get install openjdk-17-jre-headless maven)'

if [[ -z "${SHARDWISE_CACHE:-}" && -z "${HOME:-}" ]]; then
  die "neither SHARDWISE_CACHE nor HOME is set; set SHARDWISE_CACHE to a writable folder for the broker's jars and data"
fi
readonly CACHE_ROOT="${SHARDWISE_CACHE:-$HOME/.cache/shardwise}"
readonly LIBS_DIR="$CACHE_ROOT/kafka-$KAFKA_VERSION/libs"
readonly STATE_DIR="${SHARDWISE_BROKER_DIR:-$CACHE_ROOT/broker}"
readonly DATA_DIR="$STATE_DIR/data"
readonly LOG_DIR="$STATE_DIR/logs"
readonly PID_FILE="$STATE_DIR/kafka.pid"
readonly BOOTSTRAP_FILE="$STATE_DIR/bootstrap"
readonly CONFIG_FILE="$STATE_DIR/server.properties"
readonly LOG4J_FILE="$STATE_DIR/log4j.properties"
readonly LOG4J2_FILE="$STATE_DIR/log4j2.properties"
# The Kafka version that formatted the data dir.
readonly FORMATTED_FILE="$DATA_DIR/.formatted-by"

check_port() {
  local name="$1" value="$2"
  if ! [[ "$value" =~ ^[0-9]+$ ]] || ((value < 1024 || value > 65535)); then
    die "$name=$value is not a port number from 1024 to 65535"
  fi
}

readonly PORT="${KAFKA_PORT:-19092}"
readonly CONTROLLER_PORT="${KAFKA_CONTROLLER_PORT:-19093}"
check_port KAFKA_PORT "$PORT"
check_port KAFKA_CONTROLLER_PORT "$CONTROLLER_PORT"
if [[ "$PORT" == "$CONTROLLER_PORT" ]]; then
  die "KAFKA_PORT and KAFKA_CONTROLLER_PORT are both $PORT; they must differ"
fi
readonly BOOTSTRAP="127.0.0.1:$PORT"

readonly READY_TIMEOUT="${KAFKA_READY_TIMEOUT:-90}"
if ! [[ "$READY_TIMEOUT" =~ ^[0-9]+$ ]] || ((READY_TIMEOUT < 1)); then
  die "KAFKA_READY_TIMEOUT=$READY_TIMEOUT is not a whole number of seconds (at least 1)"
fi

require_java() {
  command -v java >/dev/null 2>&1 || die "java not found on PATH. $NEED_TOOLS"
  local version major
  version="$(java -version 2>&1 | sed -n 's/.*version "\([^"]*\)".*/\1/p' | head -n 1)"
  major="${version%%.*}"
  if ! [[ "$major" =~ ^[0-9]+$ ]] || ((major < MIN_JAVA)); then
    die "java on PATH is version '${version:-unknown}', Kafka $KAFKA_VERSION needs $MIN_JAVA or newer. $NEED_TOOLS"
  fi
}

logging_dependency() {
  printf '    <dependency>\n      <groupId>%s</groupId>\n      <artifactId>%s</artifactId>\n      <version>%s</version>\n    </dependency>' "$1" "$2" "$3"
}

# Fetch the broker's runtime classpath once into the cache. A marker file written last
# tells a complete download from one that was interrupted.
assemble() {
  if [[ -f "$LIBS_DIR/.complete" ]]; then
    return
  fi
  command -v mvn >/dev/null 2>&1 || die "mvn not found on PATH. $NEED_TOOLS"
  say "assembling Kafka $KAFKA_VERSION from Maven Central into $LIBS_DIR (first run only)"
  local work started logging
  started=$SECONDS
  if ((KAFKA_MAJOR >= 4)); then
    logging="$(logging_dependency org.apache.logging.log4j log4j-slf4j-impl 2.24.3)
$(logging_dependency org.apache.logging.log4j log4j-api 2.24.3)
$(logging_dependency org.apache.logging.log4j log4j-core 2.24.3)"
  else
    logging="$(logging_dependency org.slf4j slf4j-reload4j 1.7.36)
$(logging_dependency ch.qos.reload4j reload4j 1.2.25)"
  fi
  mkdir -p "$(dirname "$LIBS_DIR")"
  work="$(mktemp -d "$(dirname "$LIBS_DIR")/assemble.XXXXXX")"
  cat >"$work/pom.xml" <<EOF
<?xml version="1.0" encoding="UTF-8"?>
<!-- Throw-away pom written by scripts/kafka-broker.sh: only used to fetch jars. -->
<project xmlns="http://maven.apache.org/POM/4.0.0">
  <modelVersion>4.0.0</modelVersion>
  <groupId>local.shardwise</groupId>
  <artifactId>test-broker-classpath</artifactId>
  <version>0</version>
  <packaging>pom</packaging>
  <dependencies>
    <dependency>
      <groupId>org.apache.kafka</groupId>
      <artifactId>kafka_2.13</artifactId>
      <version>$KAFKA_VERSION</version>
    </dependency>
$logging
  </dependencies>
  <build>
    <plugins>
      <plugin>
        <groupId>org.apache.maven.plugins</groupId>
        <artifactId>maven-dependency-plugin</artifactId>
        <version>3.8.1</version>
      </plugin>
    </plugins>
  </build>
</project>
EOF
  if ! mvn -B -q -f "$work/pom.xml" dependency:copy-dependencies \
    -DoutputDirectory="$work/libs" -DincludeScope=runtime >"$work/mvn.log" 2>&1; then
    tail -n 40 "$work/mvn.log" >&2
    die "mvn could not fetch Kafka $KAFKA_VERSION from Maven Central (full log: $work/mvn.log)"
  fi
  if ! compgen -G "$work/libs/kafka_2.13-$KAFKA_VERSION.jar" >/dev/null; then
    die "mvn finished but $work/libs has no kafka_2.13-$KAFKA_VERSION.jar"
  fi
  rm -rf "$LIBS_DIR"
  mv "$work/libs" "$LIBS_DIR"
  touch "$LIBS_DIR/.complete"
  rm -rf "$work"
  say "assembled $(find "$LIBS_DIR" -name '*.jar' | wc -l) jars in $((SECONDS - started)) s"
}

write_config() {
  mkdir -p "$DATA_DIR" "$LOG_DIR"
  local quorum
  if ((KAFKA_MAJOR >= 4)); then
    quorum="controller.quorum.bootstrap.servers=127.0.0.1:$CONTROLLER_PORT"
  else
    quorum="controller.quorum.voters=1@127.0.0.1:$CONTROLLER_PORT"
  fi
  cat >"$CONFIG_FILE" <<EOF
# Written by scripts/kafka-broker.sh on every start (Kafka $KAFKA_VERSION); edits here are overwritten.
process.roles=broker,controller
node.id=1
$quorum
listeners=PLAINTEXT://127.0.0.1:$PORT,CONTROLLER://127.0.0.1:$CONTROLLER_PORT
advertised.listeners=PLAINTEXT://127.0.0.1:$PORT
controller.listener.names=CONTROLLER
inter.broker.listener.name=PLAINTEXT
listener.security.protocol.map=CONTROLLER:PLAINTEXT,PLAINTEXT:PLAINTEXT
log.dirs=$DATA_DIR
num.partitions=1
default.replication.factor=1
min.insync.replicas=1
offsets.topic.replication.factor=1
offsets.topic.num.partitions=1
transaction.state.log.replication.factor=1
transaction.state.log.min.isr=1
transaction.state.log.num.partitions=1
# The default 3000 ms delay before the first rebalance would slow every consumer test.
group.initial.rebalance.delay.ms=0
# Tests create their topics up front; a typo must fail, not create a topic.
auto.create.topics.enable=false
# Tests replay old timestamps; time-based retention would delete them at once.
log.retention.ms=-1
num.network.threads=2
num.io.threads=2
EOF
  if ((KAFKA_MAJOR >= 4)); then
    cat >"$LOG4J2_FILE" <<EOF
# Written by scripts/kafka-broker.sh on every start.
status = warn
appender.file.type = RollingFile
appender.file.name = file
appender.file.fileName = \${sys:kafka.logs.dir}/server.log
appender.file.filePattern = \${sys:kafka.logs.dir}/server.log.%i
appender.file.layout.type = PatternLayout
appender.file.layout.pattern = [%d] %p %m (%c)%n
appender.file.policies.type = Policies
appender.file.policies.size.type = SizeBasedTriggeringPolicy
appender.file.policies.size.size = 20MB
appender.file.strategy.type = DefaultRolloverStrategy
appender.file.strategy.max = 2
rootLogger.level = INFO
rootLogger.appenderRef.file.ref = file
logger.request.name = kafka.request.logger
logger.request.level = WARN
logger.stateChange.name = state.change.logger
logger.stateChange.level = WARN
logger.clients.name = org.apache.kafka.clients
logger.clients.level = WARN
EOF
    return
  fi
  cat >"$LOG4J_FILE" <<EOF
# Written by scripts/kafka-broker.sh on every start.
log4j.rootLogger=INFO, file
log4j.appender.file=org.apache.log4j.RollingFileAppender
log4j.appender.file.File=\${kafka.logs.dir}/server.log
log4j.appender.file.MaxFileSize=20MB
log4j.appender.file.MaxBackupIndex=2
log4j.appender.file.layout=org.apache.log4j.PatternLayout
log4j.appender.file.layout.ConversionPattern=[%d] %p %m (%c)%n
log4j.logger.kafka.request.logger=WARN
log4j.logger.state.change.logger=WARN
log4j.logger.org.apache.kafka.clients=WARN
EOF
}

java_classpath() { printf '%s/*' "$LIBS_DIR"; }

# The JVM options that point the broker's logging at the config write_config wrote.
logging_options() {
  if ((KAFKA_MAJOR >= 4)); then
    printf '%s\n' "-Dlog4j2.configurationFile=$LOG4J2_FILE" "-Dkafka.logs.dir=$LOG_DIR"
  else
    printf '%s\n' "-Dlog4j.configuration=file:$LOG4J_FILE" "-Dkafka.logs.dir=$LOG_DIR"
  fi
}

# The Kafka version that formatted this data dir; data formatted before the version was
# recorded came from 3.9.1, the only version the script ran then.
formatted_version() {
  if [[ -f "$FORMATTED_FILE" ]]; then
    cat "$FORMATTED_FILE"
  else
    printf '3.9.1\n'
  fi
}

format_storage() {
  if [[ -f "$DATA_DIR/meta.properties" ]]; then
    local formatted
    formatted="$(formatted_version)"
    if [[ "$formatted" != "$KAFKA_VERSION" ]]; then
      die "the data in $DATA_DIR was formatted by Kafka $formatted, and this start asks for $KAFKA_VERSION (SHARDWISE_KAFKA_VERSION); run scripts/kafka-broker.sh reset to delete it (topics, offsets), or use another SHARDWISE_BROKER_DIR"
    fi
    return
  fi
  local cluster_id standalone=()
  local -a logging
  mapfile -t logging < <(logging_options)
  cluster_id="$(java "${logging[@]}" -cp "$(java_classpath)" kafka.tools.StorageTool random-uuid \
    2>>"$LOG_DIR/storage-tool.log" | tail -n 1)"
  [[ -n "$cluster_id" ]] || die "kafka.tools.StorageTool random-uuid printed nothing (see $LOG_DIR/storage-tool.log)"
  # A dynamic quorum (controller.quorum.bootstrap.servers) starts from a voter set written
  # at format time: this node alone.
  if ((KAFKA_MAJOR >= 4)); then standalone=(--standalone); fi
  say "formatting $DATA_DIR for Kafka $KAFKA_VERSION with cluster id $cluster_id"
  java "${logging[@]}" -cp "$(java_classpath)" kafka.tools.StorageTool format \
    -t "$cluster_id" -c "$CONFIG_FILE" "${standalone[@]}" --ignore-formatted \
    >>"$LOG_DIR/storage-tool.log" 2>&1 ||
    die "kafka.tools.StorageTool format failed (see $LOG_DIR/storage-tool.log)"
  printf '%s\n' "$KAFKA_VERSION" >"$FORMATTED_FILE"
}

# The pid from the pid file, if that process is alive and is our broker (pid files
# outlive reboots and pids get reused).
running_pid() {
  [[ -f "$PID_FILE" ]] || return 1
  local pid
  pid="$(<"$PID_FILE")"
  [[ "$pid" =~ ^[0-9]+$ ]] || return 1
  [[ -r "/proc/$pid/cmdline" ]] || return 1
  local cmdline
  cmdline="$(tr '\0' ' ' <"/proc/$pid/cmdline")"
  [[ "$cmdline" == *kafka.Kafka*"$CONFIG_FILE"* ]] || return 1
  printf '%s\n' "$pid"
}

# The Kafka version of a running broker, read from its classpath (…/kafka-VERSION/libs/*).
running_version() {
  tr '\0' '\n' <"/proc/$1/cmdline" 2>/dev/null |
    sed -n 's|.*/kafka-\([0-9][0-9.]*\)/libs/\*$|\1|p' | head -n 1
}

port_open() { (exec 3<>"/dev/tcp/127.0.0.1/$1") 2>/dev/null; }

# Ready means a real client gets through: a kafkajs admin connects, lists topics and sees
# this node in the cluster metadata. Without node_modules, fall back to the server log.
broker_ready() {
  port_open "$PORT" || return 1
  if [[ -f "$REPO_ROOT/node_modules/kafkajs/package.json" ]] && command -v node >/dev/null 2>&1; then
    (cd "$REPO_ROOT" && KAFKA_CHECK_BROKER="$BOOTSTRAP" timeout 15 node -e '
      const { Kafka, logLevel } = require("kafkajs");
      const kafka = new Kafka({
        clientId: "shardwise-broker-check",
        brokers: [process.env.KAFKA_CHECK_BROKER],
        logLevel: logLevel.NOTHING,
        connectionTimeout: 2000,
        requestTimeout: 5000,
        retry: { retries: 0 },
      });
      const admin = kafka.admin();
      (async () => {
        await admin.connect();
        await admin.listTopics();
        const cluster = await admin.describeCluster();
        await admin.disconnect();
        process.exit(cluster.brokers.some((b) => b.nodeId === 1) ? 0 : 1);
      })().catch(() => process.exit(1));
    ' >/dev/null 2>&1)
  else
    grep -q 'Kafka Server started' "$LOG_DIR/server.log" 2>/dev/null
  fi
}

publish_bootstrap() {
  printf '%s\n' "$BOOTSTRAP" >"$BOOTSTRAP_FILE.tmp"
  mv "$BOOTSTRAP_FILE.tmp" "$BOOTSTRAP_FILE"
}

wait_ready() {
  local pid="$1" started=$SECONDS
  while ! broker_ready; do
    if ! kill -0 "$pid" 2>/dev/null; then
      tail -n 30 "$LOG_DIR/server.log" >&2 2>/dev/null || true
      tail -n 30 "$LOG_DIR/kafka.out" >&2 2>/dev/null || true
      rm -f "$PID_FILE"
      die "the broker (pid $pid) exited during start-up; logs in $LOG_DIR (if its data is at fault, scripts/kafka-broker.sh reset deletes it)"
    fi
    if ((SECONDS - started >= READY_TIMEOUT)); then
      tail -n 30 "$LOG_DIR/server.log" >&2 2>/dev/null || true
      die "the broker (pid $pid) did not accept clients at $BOOTSTRAP within KAFKA_READY_TIMEOUT=$READY_TIMEOUT s; logs in $LOG_DIR, stop it with scripts/kafka-broker.sh stop"
    fi
    sleep 1
  done
}

cmd_start() {
  mkdir -p "$STATE_DIR"
  # One start at a time per state dir (two test runs starting together share one broker).
  exec 9>"$STATE_DIR/.lock"
  flock 9

  local pid
  if pid="$(running_pid)"; then
    local version
    version="$(running_version "$pid")"
    if [[ "$version" != "$KAFKA_VERSION" ]]; then
      die "the broker in $STATE_DIR (pid $pid) runs Kafka ${version:-of an unknown version}, and this start asks for $KAFKA_VERSION (SHARDWISE_KAFKA_VERSION); stop it first (scripts/kafka-broker.sh stop), or use another SHARDWISE_BROKER_DIR and KAFKA_PORT"
    fi
    if ! broker_ready; then
      say "broker (pid $pid) is running but not answering yet; waiting"
      wait_ready "$pid"
    fi
    publish_bootstrap
    say "already running (pid $pid, Kafka $KAFKA_VERSION) at $BOOTSTRAP"
    printf '%s\n' "$BOOTSTRAP"
    return
  fi
  rm -f "$PID_FILE" "$BOOTSTRAP_FILE"

  if port_open "$PORT"; then
    die "127.0.0.1:$PORT is already taken by another program (not the broker in $STATE_DIR); stop it or choose another port with KAFKA_PORT"
  fi
  if port_open "$CONTROLLER_PORT"; then
    die "127.0.0.1:$CONTROLLER_PORT is already taken by another program; stop it or choose another port with KAFKA_CONTROLLER_PORT"
  fi

  require_java
  assemble
  write_config
  format_storage

  local started=$SECONDS
  say "starting Kafka $KAFKA_VERSION at $BOOTSTRAP (controller 127.0.0.1:$CONTROLLER_PORT), logs in $LOG_DIR"
  # setsid: the broker outlives the npm pretest step that starts it. 9>&-: it must not
  # inherit the start lock.
  local -a logging
  mapfile -t logging < <(logging_options)
  setsid nohup java -Xms512m -Xmx512m -XX:+UseG1GC -XX:MaxGCPauseMillis=20 \
    -XX:+ExitOnOutOfMemoryError -Djava.awt.headless=true "${logging[@]}" \
    -cp "$(java_classpath)" kafka.Kafka "$CONFIG_FILE" \
    </dev/null >"$LOG_DIR/kafka.out" 2>&1 9>&- &
  pid=$!
  printf '%s\n' "$pid" >"$PID_FILE"
  wait_ready "$pid"
  publish_bootstrap
  say "ready (pid $pid) in $((SECONDS - started)) s"
  printf '%s\n' "$BOOTSTRAP"
}

cmd_stop() {
  local pid
  if ! pid="$(running_pid)"; then
    rm -f "$PID_FILE" "$BOOTSTRAP_FILE"
    return 0
  fi
  rm -f "$BOOTSTRAP_FILE"
  kill -TERM "$pid" 2>/dev/null || true
  local waited=0
  while kill -0 "$pid" 2>/dev/null && ((waited < 300)); do
    sleep 0.1
    waited=$((waited + 1))
  done
  if kill -0 "$pid" 2>/dev/null; then
    say "broker (pid $pid) ignored SIGTERM for 30 s; sending SIGKILL"
    kill -KILL "$pid" 2>/dev/null || true
    while kill -0 "$pid" 2>/dev/null; do sleep 0.1; done
  fi
  rm -f "$PID_FILE"
  say "stopped (pid $pid)"
}

cmd_status() {
  local pid
  if ! pid="$(running_pid)"; then
    say "not running (state in $STATE_DIR)"
    exit 3
  fi
  if ! broker_ready; then
    say "running (pid $pid) but not accepting clients at $BOOTSTRAP; logs in $LOG_DIR"
    exit 1
  fi
  say "running (pid $pid, Kafka $(running_version "$pid")) at $BOOTSTRAP"
  printf '%s\n' "$BOOTSTRAP"
}

cmd_reset() {
  cmd_stop
  rm -rf "$DATA_DIR"
  say "deleted the broker's data in $DATA_DIR"
}

case "${1:-}" in
  start) cmd_start ;;
  stop) cmd_stop ;;
  status) cmd_status ;;
  reset) cmd_reset ;;
  *)
    say "usage: scripts/kafka-broker.sh start|stop|status|reset (got '${1:-}')"
    exit 2
    ;;
esac
