#!/usr/bin/env bash
# A private PulseAudio server with virtual devices, for the audio tests.
#
#   bash .ci/pulse-rig.sh install        apt-get the server, its tools and the LADSPA SDK
#   eval "$(bash .ci/pulse-rig.sh start)" start a rig; prints the exports to source
#   bash .ci/pulse-rig.sh stop [DIR]     stop the rig in DIR (default $TONETRACE_PULSE_RIG_DIR)
#
# The rig (see ../shared/AUDIO.md): sink "out" is the interface output the
# program plays to, source "cap.monitor" the interface input. Output channel 1
# passes through a one-pole LADSPA low-pass at 1 kHz (label lpf, ladspa-sdk's
# filter.so) on its way to input 1; output channel 2 goes straight to input 2.
# Float32, 48 kHz, stereo, no remixing, no rewinds, no rate adjustment.
#
# start also writes the exports to $DIR/env, so a later shell can source it.
# The server is bounded: start waits at most ~10 s for it, stop at most ~5 s
# before it sends SIGKILL. Exit status non-zero when the rig is not usable.
set -euo pipefail

die() { echo "pulse-rig: $*" >&2; exit 1; }

install_rig() {
  local sudo=""
  [ "$(id -u)" -eq 0 ] || sudo="sudo"
  $sudo apt-get install -y -qq --no-install-recommends pulseaudio pulseaudio-utils ladspa-sdk >/dev/null
}

start_rig() {
  command -v pulseaudio >/dev/null || die "pulseaudio is not installed; run: bash $0 install"
  command -v pactl >/dev/null || die "pactl is not installed; run: bash $0 install"
  local rig
  rig=$(mktemp -d /tmp/pa-rig.XXXXXX) # mode 0700, as PulseAudio requires
  export XDG_RUNTIME_DIR=$rig PULSE_STATE_PATH=$rig/state PULSE_CONFIG=$rig/daemon.conf
  unset PULSE_SERVER
  cat >"$rig/daemon.conf" <<'CONF'
enable-remixing = no
default-sample-format = float32le
default-sample-rate = 48000
CONF
  cat >"$rig/rig.pa" <<'PA'
load-module module-native-protocol-unix auth-anonymous=1
load-module module-null-sink sink_name=cap sink_properties=device.description=RigCapture rate=48000 channels=2 channel_map=front-left,front-right format=float32le norewinds=1
load-module module-ladspa-sink sink_name=dut sink_master=cap channels=1 channel_map=front-left rate=48000 format=float32le plugin=filter label=lpf control=1000
load-module module-remap-sink sink_name=ref master=cap channels=1 channel_map=front-right master_channel_map=front-right rate=48000 format=float32le remix=no
load-module module-combine-sink sink_name=out slaves=dut,ref channels=2 channel_map=front-left,front-right rate=48000 format=float32le remix=no adjust_time=0 resample_method=trivial
PA
  if ! timeout 10 pulseaudio -n -F "$rig/rig.pa" --daemonize=yes --exit-idle-time=-1 \
      --use-pid-file=yes --log-target=file:"$rig/pa.log" >/dev/null 2>&1; then
    cat "$rig/pa.log" >&2 2>/dev/null || true
    rm -rf "$rig"
    die "the server did not start (log above)"
  fi
  local pid="" s
  for _ in $(seq 50); do
    [ -s "$rig/pulse/pid" ] && pid=$(cat "$rig/pulse/pid") && break
    sleep 0.1
  done
  [ -n "$pid" ] || { rm -rf "$rig"; die "no pid file in $rig/pulse"; }
  # the daemon's exit status does not prove every module loaded: check the sinks
  for s in cap dut ref out; do
    if ! timeout 5 pactl list short sinks | awk '{print $2}' | grep -qx "$s"; then
      cat "$rig/pa.log" >&2
      stop_rig "$rig"
      die "sink $s is missing (server log above)"
    fi
  done
  cat >"$rig/env" <<ENV
export XDG_RUNTIME_DIR=$rig
export PULSE_STATE_PATH=$rig/state
export PULSE_CONFIG=$rig/daemon.conf
export TONETRACE_PULSE_RIG=1
export TONETRACE_PULSE_RIG_DIR=$rig
ENV
  cat "$rig/env"
}

stop_rig() {
  local rig=${1:-${TONETRACE_PULSE_RIG_DIR:-}}
  [ -n "$rig" ] || die "which rig? pass its directory or set TONETRACE_PULSE_RIG_DIR"
  case "$rig" in /tmp/pa-rig.*) ;; *) die "$rig is not a rig directory (/tmp/pa-rig.*)" ;; esac
  [ -d "$rig" ] || return 0
  local pid=""
  [ -s "$rig/pulse/pid" ] && pid=$(cat "$rig/pulse/pid")
  if [ -n "$pid" ] && kill -0 "$pid" 2>/dev/null; then
    kill "$pid" 2>/dev/null || true
    for _ in $(seq 50); do kill -0 "$pid" 2>/dev/null || break; sleep 0.1; done
    kill -9 "$pid" 2>/dev/null || true
  fi
  rm -rf "$rig"
}

case "${1:-}" in
  install) install_rig ;;
  start) start_rig ;;
  stop) stop_rig "${2:-}" ;;
  *) die "usage: $0 install | start | stop [DIR]" ;;
esac
