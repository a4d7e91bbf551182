# Shared by the bench scripts that run tensiled against tensile-sim over
# loopback TCP (soak.sh, long_run_memory.sh); sourced, not run.
#
#   free_port                       print a free loopback TCP port
#   write_tcp_rig DIR NAME PORT PACE  write DIR/rig.toml: one TCP source "frame"
#                                   (lines: time, force N, extension mm,
#                                   crosshead mm) at PORT, simulated seconds
#                                   per wall second PACE, data in DIR/data,
#                                   monitor on a free port, token in DIR
#   start_daemon BINDIR DIR         start tensiled on DIR/rig.toml; sets
#                                   daemon (pid), port (monitor), token
#   api PATH                        GET /api/v1/PATH from the monitor
#   arm JSON                        POST an arming with its specimen
#
# Error policy: start_daemon ends the script with the daemon's output when
# it does not come up within 10 s; the caller's trap stops $daemon.

free_port() { python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1",0)); print(s.getsockname()[1])'; }

write_tcp_rig() {
    local dir=$1 name=$2 sim_port=$3 pace=$4
    cat >"$dir/rig.toml" <<TOML
[daemon]
data_dir = "$dir/data"
[monitor]
listen = "127.0.0.1"
port = 0
token_file = "$dir/monitor.token"
[rig]
name = "$name"
[run]
profile = "bar"
[profile.bar]
proof_offsets_pct = [0.2]
[source.frame]
kind = "tcp"
host = "127.0.0.1"
port = $sim_port
retry_min_ms = 100
retry_max_ms = 500
format = "lines"
time_field = 0
clock_pace = $pace
  [[source.frame.channel]]
  name = "force"
  unit = "N"
  field = 1
  [[source.frame.channel]]
  name = "extension"
  unit = "mm"
  field = 2
  [[source.frame.channel]]
  name = "crosshead"
  unit = "mm"
  field = 3
TOML
}

start_daemon() {
    local bindir=$1 dir=$2
    "$bindir/tensiled" --config "$dir/rig.toml" >"$dir/tensiled.out" 2>&1 &
    daemon=$!
    port=""
    for _ in $(seq 100); do
        port=$(grep -o 'monitor http://127.0.0.1:[0-9]*' "$dir/tensiled.out" 2>/dev/null | grep -o '[0-9]*$' || true)
        [ -n "$port" ] && break
        sleep 0.1
    done
    [ -n "$port" ] || { cat "$dir/tensiled.out"; echo "$(basename "$0"): tensiled did not start" >&2; exit 1; }
    token=$(cat "$dir/monitor.token")
}

api() { curl -s --max-time 5 "http://127.0.0.1:$port/api/v1/$1"; }
arm() { curl -s --max-time 5 -X POST -H "Authorization: Bearer $token" -d "$1" "http://127.0.0.1:$port/api/v1/arm" >/dev/null; }
