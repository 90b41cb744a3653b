#!/usr/bin/env bash
# npm pretest: make sure the tools the test suites call exist, then start the Kafka test
# broker (unless KAFKA_BROKERS points at one already): Kafka 4.4.0, or the release named by
# SHARDWISE_KAFKA_VERSION (see scripts/kafka-broker.sh).
#
# Tools, with the Debian package that provides each:
#   prometheus, promtool  prometheus   (Prometheus server and rule unit tests)
#   kcat                  kcat         (an independent Kafka client for e2e tests)
#   chromium              chromium     (browser tests)
#   tmux                  tmux         (terminal UI tests)
#   java, mvn             openjdk-17-jre-headless, maven (only when the broker is started here)
#
# As root with apt-get, missing packages are installed; otherwise the install line is
# printed and the script fails. A second run with everything present is quick and quiet.
# Test code finds the broker through KAFKA_BROKERS, else the file
# ${SHARDWISE_BROKER_DIR:-${SHARDWISE_CACHE:-$HOME/.cache/shardwise}/broker}/bootstrap
# that scripts/kafka-broker.sh writes once the broker accepts clients.
set -euo pipefail

readonly HERE="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"

say() { printf 'provision: %s\n' "$*" >&2; }

# "command package" pairs; a package is missing when its command is not on PATH.
needs=(
  "prometheus prometheus"
  "promtool prometheus"
  "kcat kcat"
  "chromium chromium"
  "tmux tmux"
)
if [[ -z "${KAFKA_BROKERS:-}" ]]; then
  needs+=("java openjdk-17-jre-headless" "mvn maven")
fi

missing=()
for pair in "${needs[@]}"; do
  read -r cmd pkg <<<"$pair"
  if ! command -v "$cmd" >/dev/null 2>&1 && [[ " ${missing[*]-} " != *" $pkg "* ]]; then
    missing+=("$pkg")
  fi
done

install_cmd="apt-get install -y --no-install-recommends ${missing[*]-}"

apt_lists_fresh() {
  # Lists younger than a day: installing from them should not hit removed versions.
  [[ -n "$(find /var/lib/apt/lists -maxdepth 1 -name '*_Packages*' -mmin -1440 -print -quit 2>/dev/null)" ]]
}

apt_install() {
  DEBIAN_FRONTEND=noninteractive apt-get install -y -q --no-install-recommends \
    -o Dpkg::Options::=--force-confdef -o Dpkg::Options::=--force-confold "$@" </dev/null
}

prometheus_pids_on_9090() {
  command -v ss >/dev/null 2>&1 || return 0
  ss -Hltnp 'sport = :9090' 2>/dev/null | grep -o 'pid=[0-9]*' | cut -d= -f2 | sort -u
}

install_missing() {
  local policy=/usr/sbin/policy-rc.d made_policy=0 log
  log="$(mktemp)"
  # Debian's prometheus package enables and starts a daemon on :9090 from its postinst.
  # Tests start their own servers, so forbid service starts for the duration of the
  # install (policy-rc.d exit 101 = "action forbidden"), unless a policy already exists.
  if [[ ! -e "$policy" ]]; then
    printf '#!/bin/sh\nexit 101\n' >"$policy"
    chmod +x "$policy"
    made_policy=1
  fi
  # shellcheck disable=SC2064
  trap "[[ $made_policy == 1 ]] && rm -f '$policy'; rm -f '$log'" EXIT

  say "installing missing Debian packages: ${missing[*]}"
  local ok=0
  if apt_lists_fresh && apt_install "${missing[@]}" >"$log" 2>&1; then
    ok=1
  else
    say "refreshing the package lists (apt-get update)"
    if DEBIAN_FRONTEND=noninteractive apt-get update -q </dev/null >>"$log" 2>&1 &&
      apt_install "${missing[@]}" >>"$log" 2>&1; then
      ok=1
    fi
  fi
  if ((ok == 0)); then
    tail -n 30 "$log" >&2
    say "error: could not install ${missing[*]}; run by hand: apt-get update && $install_cmd"
    exit 1
  fi

  # Should a prometheus daemon have started anyway (no policy-rc.d honoured), stop it:
  # it would hold :9090 and scrape nothing of ours. Only a process running the packaged
  # binary is touched, by its pid.
  local pid
  for pid in $(prometheus_pids_on_9090); do
    if [[ "$(readlink "/proc/$pid/exe" 2>/dev/null)" == /usr/bin/prometheus ]]; then
      say "stopping the prometheus daemon (pid $pid) that the package started on :9090"
      if command -v systemctl >/dev/null 2>&1 && [[ -d /run/systemd/system ]]; then
        systemctl disable --now prometheus >/dev/null 2>&1 || kill "$pid" 2>/dev/null || true
      else
        kill "$pid" 2>/dev/null || true
      fi
    fi
  done

  for pair in "${needs[@]}"; do
    read -r cmd pkg <<<"$pair"
    command -v "$cmd" >/dev/null 2>&1 ||
      {
        say "error: installed $pkg but '$cmd' is still not on PATH"
        exit 1
      }
  done
  say "installed ${missing[*]}"
}

if ((${#missing[@]} > 0)); then
  if [[ "$(id -u)" == 0 ]] && command -v apt-get >/dev/null 2>&1; then
    install_missing
  else
    say "error: the test suites need these Debian packages, which are not installed: ${missing[*]}"
    if command -v apt-get >/dev/null 2>&1; then
      say "install them as root with: sudo apt-get update && sudo $install_cmd"
    else
      say "this system has no apt-get; install the equivalents of: ${missing[*]}"
    fi
    exit 1
  fi
fi

if [[ -n "${KAFKA_BROKERS:-}" ]]; then
  say "KAFKA_BROKERS=$KAFKA_BROKERS is set; not starting the test broker"
  exit 0
fi

bootstrap="$(bash "$HERE/kafka-broker.sh" start | tail -n 1)"
say "Kafka test broker at $bootstrap"
