# Shared by bin/start, bin/test and bin/stop. Sourced, not run.
# shellcheck shell=bash
set -euo pipefail

ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$ROOT"
export PATH="$ROOT/node_modules/.bin:$PATH"

log() { printf '\033[1;36m[tracewell]\033[0m %s\n' "$*" >&2; }
die() { printf '\033[1;31m[tracewell] %s\033[0m\n' "$*" >&2; exit 1; }

PG_PORT="${PG_PORT:-54329}"
DATA_DIR="${TRACEWELL_DATA_DIR:-$ROOT/.data}"
mkdir -p "$DATA_DIR"

as_root_or_sudo() { if [ "$(id -u)" = 0 ]; then "$@"; else sudo "$@"; fi; }

ensure_node_modules() {
  # The marker holds the hash of the lock file the tree was installed from. A fresh clone gets `npm ci`;
  # an existing tree whose lock changed gets an incremental `npm install` (never a wipe of a tree in use).
  local marker="node_modules/.tracewell-installed" want
  want="$(sha1sum package-lock.json | cut -c1-40)"
  if [ ! -d node_modules ]; then
    log "installing npm packages (npm ci)"
    npm ci --no-audit --no-fund --loglevel=error
  elif [ "$(cat "$marker" 2>/dev/null)" != "$want" ]; then
    log "package-lock.json changed: updating npm packages"
    npm install --no-audit --no-fund --loglevel=error
  else
    return 0
  fi
  echo "$want" >"$marker"
}

ensure_apt_package() { # $1 = probe path, $2.. = packages
  local probe="$1"; shift
  if ! compgen -G "$probe" >/dev/null; then
    log "installing Debian packages: $*"
    as_root_or_sudo apt-get update -qq
    DEBIAN_FRONTEND=noninteractive as_root_or_sudo apt-get install -y -qq "$@" >/dev/null
  fi
}

# PostgreSQL's tools refuse to run as root and run as `postgres`, which must be able to enter every
# parent of the data folder. A clone under a closed folder (a home directory of mode 0700, say) cannot
# hold the cluster, so it then lives under /var/lib/tracewell/<hash of this checkout> instead.
pg_data_dir() {
  local wanted="$DATA_DIR/pg"
  if [ "$(id -u)" != 0 ]; then echo "$wanted"; return; fi
  mkdir -p "$wanted"
  if runuser -u postgres -- test -x "$DATA_DIR" 2>/dev/null && runuser -u postgres -- test -x "$ROOT" 2>/dev/null; then
    echo "$wanted"
  else
    local alt="/var/lib/tracewell/$(printf '%s' "$ROOT" | sha1sum | cut -c1-12)/pg"
    log "note: the postgres user cannot reach $DATA_DIR (a parent folder is closed to other users);"
    log "      keeping this checkout's database cluster in $alt instead"
    mkdir -p "$(dirname "$alt")"
    echo "$alt"
  fi
}

pg_bin() { ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n1; }

pg_run() { if [ "$(id -u)" = 0 ]; then runuser -u postgres -- "$@"; else "$@"; fi; }

ensure_postgres() {
  ensure_apt_package "/usr/lib/postgresql/*/bin/initdb" postgresql
  PGBIN="$(pg_bin)"
  PGDATA="$(pg_data_dir)"
  export PGBIN PGDATA
  if [ ! -f "$PGDATA/PG_VERSION" ]; then
    log "creating a PostgreSQL cluster in $PGDATA (127.0.0.1:$PG_PORT)"
    mkdir -p "$PGDATA"
    if [ "$(id -u)" = 0 ]; then chown -R postgres:postgres "$PGDATA"; fi
    chmod 700 "$PGDATA"
    pg_run "$PGBIN/initdb" -D "$PGDATA" -U postgres --auth=trust -E UTF8 --locale=C.UTF-8 >/dev/null
    cat >>"$PGDATA/postgresql.conf" <<CONF
listen_addresses = '127.0.0.1'
port = $PG_PORT
unix_socket_directories = ''
max_connections = 200
# A development and test cluster: speed over crash safety.
fsync = off
synchronous_commit = off
full_page_writes = off
CONF
  fi
  if ! pg_run "$PGBIN/pg_ctl" -D "$PGDATA" status >/dev/null 2>&1; then
    log "starting PostgreSQL on 127.0.0.1:$PG_PORT"
    pg_run "$PGBIN/pg_ctl" -D "$PGDATA" -l "$PGDATA/server.log" -w -t 60 start >/dev/null ||
      { tail -n 20 "$PGDATA/server.log" >&2; die "PostgreSQL did not start (log above)"; }
  else
    # After an apt upgrade the running server may be older than the binaries on disk.
    local want have
    want="$("$PGBIN/postgres" -V | awk '{print $3}')"
    have="$("$PGBIN/psql" -h 127.0.0.1 -p "$PG_PORT" -U postgres -tAc 'SHOW server_version' 2>/dev/null | awk '{print $1}')"
    if [ -n "$have" ] && [ "$want" != "$have" ]; then
      log "restarting PostgreSQL ($have running, $want installed)"
      pg_run "$PGBIN/pg_ctl" -D "$PGDATA" -l "$PGDATA/server.log" -w -t 60 restart >/dev/null
    fi
  fi
}

ensure_database() { # $1 = database name
  local name="$1"
  if ! "$PGBIN/psql" -h 127.0.0.1 -p "$PG_PORT" -U postgres -tAc "SELECT 1 FROM pg_database WHERE datname='$name'" | grep -q 1; then
    log "creating database $name"
    "$PGBIN/psql" -h 127.0.0.1 -p "$PG_PORT" -U postgres -qc "CREATE DATABASE \"$name\"" >/dev/null
  fi
}

recreate_database() { # $1 = database name
  local name="$1"
  PGOPTIONS="-c client_min_messages=warning" "$PGBIN/psql" -h 127.0.0.1 -p "$PG_PORT" -U postgres -qc "DROP DATABASE IF EXISTS \"$name\" WITH (FORCE)" >/dev/null
  "$PGBIN/psql" -h 127.0.0.1 -p "$PG_PORT" -U postgres -qc "CREATE DATABASE \"$name\"" >/dev/null
}

session_secret() {
  local f="$DATA_DIR/session-secret"
  [ -s "$f" ] || head -c 32 /dev/urandom | base64 | tr -d '\n' >"$f"
  cat "$f"
}

wait_for_port() { # $1 = port, $2 = what
  for _ in $(seq 1 150); do
    if (exec 3<>"/dev/tcp/127.0.0.1/$1") 2>/dev/null; then return 0; fi
    sleep 0.2
  done
  die "$2 did not come up on 127.0.0.1:$1"
}

port_free() { ! (exec 3<>"/dev/tcp/127.0.0.1/$1") 2>/dev/null; }

# Starts the S3 and SMTP fakes unless real services are configured, and exports their settings.
# $1 = folder for their data, $2 = S3 port, $3 = SMTP port. Sets FAKES_PID when it started them.
start_fakes() {
  local dir="$1" s3port="$2" smtpport="$3" need=""
  FAKES_PID=""
  if [ -z "${S3_ENDPOINT:-}" ]; then
    need="$need s3"
    export S3_ENDPOINT="http://127.0.0.1:$s3port" S3_BUCKET="${S3_BUCKET:-tracewell}" \
      S3_ACCESS_KEY_ID="S3RVER" S3_SECRET_ACCESS_KEY="S3RVER" S3_REGION="us-east-1" S3_FORCE_PATH_STYLE="true"
  fi
  if [ -z "${SMTP_URL:-}" ]; then
    need="$need smtp"
    export SMTP_URL="smtp://127.0.0.1:$smtpport" MAIL_OUTBOX_DIR="$dir/mail"
  fi
  [ -n "$need" ] || return 0
  case "$need" in *s3*) port_free "$s3port" || die "port $s3port (S3 fake) is in use: is another Tracewell running? stop it or set S3_PORT" ;; esac
  case "$need" in *smtp*) port_free "$smtpport" || die "port $smtpport (SMTP fake) is in use: stop the other Tracewell or set SMTP_PORT" ;; esac
  mkdir -p "$dir"
  log "starting local fakes:$need (data in $dir)"
  FAKES_DIR="$dir" FAKES_S3_PORT="$s3port" FAKES_SMTP_PORT="$smtpport" FAKES_RUN="$need" \
    tsx bin/fakes.ts >"$dir/fakes.log" 2>&1 &
  FAKES_PID=$!
  case "$need" in *s3*) wait_for_port "$s3port" "the S3 fake" ;; esac
  case "$need" in *smtp*) wait_for_port "$smtpport" "the SMTP fake" ;; esac
}

ensure_chromium() { ensure_apt_package "/usr/bin/chromium" chromium; }
