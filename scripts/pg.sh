#!/usr/bin/env bash
# Project-local PostgreSQL (Debian's packages) for development and tests.
#
#   bash scripts/pg.sh up|down|status|url [--test]
#
# Dev cluster:  data under <project>/.data/pg, 127.0.0.1:54329, database `cellsitter`.
# Test cluster (--test): a throwaway folder under /tmp, 127.0.0.1:54339, fsync off,
#               database `cellsitter_test`; `down --test` stops it and deletes the folder.
#
# Both listen on TCP 127.0.0.1 only, with no Unix socket (the usual socket folder may be
# missing, and socket paths are limited to 107 bytes). The app connects as role
# `cellsitter` with a password; the password is not a secret because nothing but
# this machine can reach the server.
set -euo pipefail

PROJECT_DIR="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
STATE_DIR="$PROJECT_DIR/.data"
# Where Debian puts each major version's server binaries (overridable for tests of this script).
PG_LIB_ROOT="${CELLSITTER_PG_LIB_ROOT:-/usr/lib/postgresql}"

APP_ROLE=cellsitter
APP_PASSWORD=cellsitter

say() { printf '%s\n' "$*" >&2; }
die() {
	say "pg.sh: $*"
	exit 1
}

usage() {
	say "Usage: bash scripts/pg.sh up|down|status|url [--test]"
	exit 2
}

is_root() { [ "$(id -u)" -eq 0 ]; }

# ---------------------------------------------------------------------------
# Finding (and when root, installing) the server binaries
# ---------------------------------------------------------------------------

# Prints the newest /usr/lib/postgresql/<major>/bin that holds initdb, or nothing.
# The `|| true` matters: under `set -o pipefail` a glob that matches nothing would
# otherwise end the script without a word.
find_bin_dir() {
	local dir
	dir="$(ls -d "$PG_LIB_ROOT"/*/bin 2>/dev/null | sort -V | tail -n 1 || true)"
	if [ -n "$dir" ] && [ -x "$dir/initdb" ] && [ -x "$dir/pg_ctl" ]; then
		printf '%s\n' "$dir"
	fi
}

install_postgresql() {
	if ! is_root; then
		say "PostgreSQL is not installed, and installing it needs root."
		say "Install the server once, then run this again:"
		say "    sudo apt-get install postgresql      (Debian / Ubuntu)"
		say "(Only the binaries are needed; this project runs its own server on port 54329.)"
		exit 1
	fi
	say "PostgreSQL is not installed; installing Debian's postgresql package (apt-get)..."
	# Without this the package creates and starts a system cluster on port 5432 that we
	# would never use.
	mkdir -p /etc/postgresql-common/createcluster.d
	printf 'create_main_cluster = false\n' >/etc/postgresql-common/createcluster.d/50-cellsitter-no-main.conf
	export DEBIAN_FRONTEND=noninteractive
	apt-get update -qq </dev/null
	apt-get install -y -qq postgresql </dev/null >/dev/null
}

require_bin_dir() {
	BIN_DIR="$(find_bin_dir)"
	if [ -z "$BIN_DIR" ]; then
		install_postgresql
		BIN_DIR="$(find_bin_dir)"
		[ -n "$BIN_DIR" ] || die "installed postgresql, but found no initdb under $PG_LIB_ROOT/*/bin."
	fi
	if is_root && ! id -u postgres >/dev/null 2>&1; then
		die "running as root needs the 'postgres' OS user (PostgreSQL refuses to run as root); install Debian's postgresql package."
	fi
}

# ---------------------------------------------------------------------------
# Running server programs as the right OS user
# ---------------------------------------------------------------------------

# PostgreSQL refuses to run as root, so as root every server program runs as the
# `postgres` OS user, from `/` (a working folder it cannot read gives warnings).
as_pg() {
	if is_root; then
		(cd / && runuser -u postgres -- "$@")
	else
		"$@"
	fi
}

# Makes a folder that the server's OS user owns, mode 0700 (initdb insists on that).
make_owned_dir() {
	mkdir -p "$1"
	chmod 700 "$1"
	if is_root; then chown postgres: "$1"; fi
}

# True when the server's OS user can walk down to (search) the given folder.
server_user_can_reach() {
	if is_root; then
		(cd / && runuser -u postgres -- test -x "$1") 2>/dev/null
	else
		test -x "$1"
	fi
}

# ---------------------------------------------------------------------------
# Cluster settings
# ---------------------------------------------------------------------------

# 0711: the `postgres` user may pass through to .data/pg but not list .data (demo password).
ensure_state_dir() {
	if [ ! -d "$STATE_DIR" ]; then
		mkdir -p "$STATE_DIR"
		chmod 711 "$STATE_DIR"
	fi
}

project_hash() { printf '%s' "$PROJECT_DIR" | sha256sum | cut -c1-12; }

# Prints the dev data folder: <project>/.data/pg, or a folder under /var/tmp when the
# `postgres` user cannot enter the project (a clone under a 0700 home such as /root).
dev_data_dir() {
	if ! is_root; then
		printf '%s\n' "$STATE_DIR/pg"
		return
	fi
	ensure_state_dir
	if server_user_can_reach "$STATE_DIR"; then
		printf '%s\n' "$STATE_DIR/pg"
	else
		printf '%s\n' "/var/tmp/cellsitter-$(project_hash)/pg"
	fi
}

# The test cluster lives in a mktemp folder; its path is remembered here so that
# `status --test` and `down --test` find it.
test_dir_record() { printf '%s\n' "$STATE_DIR/pg-test-dir"; }

recorded_test_data_dir() {
	local record
	record="$(test_dir_record)"
	if [ -f "$record" ]; then cat "$record"; fi
}

configure() {
	if [ "$MODE" = test ]; then
		PORT=54339
		DB_NAME=cellsitter_test
	else
		PORT=54329
		DB_NAME=cellsitter
	fi
}

locate_data_dir() {
	if [ "$MODE" = test ]; then
		DATA_DIR="$(recorded_test_data_dir)"
	else
		DATA_DIR="$(dev_data_dir)"
	fi
}

database_url() { printf 'postgres://%s:%s@127.0.0.1:%s/%s\n' "$APP_ROLE" "$APP_PASSWORD" "$PORT" "$DB_NAME"; }

# ---------------------------------------------------------------------------
# Creating a cluster
# ---------------------------------------------------------------------------

write_settings() {
	local conf="$1/postgresql.conf"
	{
		printf '\n# --- cellsitter (scripts/pg.sh) ---\n'
		printf "listen_addresses = '127.0.0.1'\n"
		printf 'port = %s\n' "$PORT"
		printf "unix_socket_directories = ''\n"
		printf 'max_connections = 100\n'
		if [ "$MODE" = test ]; then
			# Throwaway data: trade crash safety for speed.
			printf 'fsync = off\nsynchronous_commit = off\nfull_page_writes = off\n'
		fi
	} >>"$conf"
}

# Creates the role and database in single-user mode, before the server ever listens,
# so no superuser password or trust rule is needed.
create_role_and_database() {
	local dir="$1" output
	output="$(as_pg "$BIN_DIR/postgres" --single -D "$dir" -c listen_addresses='' postgres <<SQL 2>&1
CREATE ROLE $APP_ROLE LOGIN CREATEDB PASSWORD '$APP_PASSWORD';
CREATE DATABASE $DB_NAME OWNER $APP_ROLE;
SQL
)" || die "could not create role and database: $output"
	if printf '%s' "$output" | grep -q 'ERROR'; then
		die "could not create role and database: $output"
	fi
}

# initdb into a side folder and move it into place only when complete, so an
# interrupted first run never leaves a half-made cluster behind.
init_cluster() {
	local dir="$1" staging="$1.init" pwfile
	rm -rf "$staging"
	make_owned_dir "$staging"
	as_pg "$BIN_DIR/initdb" -D "$staging" -U postgres -E UTF8 --locale=C.UTF-8 \
		--auth-host=scram-sha-256 --auth-local=peer >"$staging.log" 2>&1 ||
		die "initdb failed; see $staging.log"
	rm -f "$staging.log"
	write_settings "$staging"
	create_role_and_database "$staging"
	mv "$staging" "$dir"
}

# ---------------------------------------------------------------------------
# Commands
# ---------------------------------------------------------------------------

is_running() {
	[ -n "$DATA_DIR" ] && [ -f "$DATA_DIR/PG_VERSION" ] &&
		as_pg "$BIN_DIR/pg_ctl" -D "$DATA_DIR" status >/dev/null 2>&1
}

port_in_use() { (exec 3<>"/dev/tcp/127.0.0.1/$1") 2>/dev/null; }

new_test_data_dir() {
	# As root, /tmp rather than $TMPDIR: the `postgres` user may not reach a private TMPDIR.
	local base="${TMPDIR:-/tmp}"
	if is_root; then base=/tmp; fi
	DATA_DIR="$(mktemp -d "$base/cellsitter-pgtest.XXXXXX")/pg"
	# The mktemp folder itself must be passable for the `postgres` user.
	chmod 711 "$(dirname "$DATA_DIR")"
	ensure_state_dir
	printf '%s\n' "$DATA_DIR" >"$(test_dir_record)"
}

cmd_up() {
	if is_running; then
		say "PostgreSQL ($MODE) is already running on 127.0.0.1:$PORT (data: $DATA_DIR)."
		return
	fi
	if port_in_use "$PORT"; then
		die "port $PORT on 127.0.0.1 is already taken by another program, so the $MODE database cannot start. Stop that program (perhaps a database of another copy of this project: bash scripts/pg.sh down${MODE_FLAG:+ $MODE_FLAG} there) and try again."
	fi
	if [ "$MODE" = test ] && { [ -z "$DATA_DIR" ] || [ ! -f "$DATA_DIR/PG_VERSION" ]; }; then
		new_test_data_dir
	fi
	if [ "$MODE" = dev ] && [ "$DATA_DIR" != "$STATE_DIR/pg" ]; then
		say "Note: the 'postgres' OS user cannot enter $PROJECT_DIR, so the database files are kept in $DATA_DIR instead of .data/pg."
		mkdir -p "$(dirname "$DATA_DIR")"
		chmod 711 "$(dirname "$DATA_DIR")"
	fi
	if [ ! -f "$DATA_DIR/PG_VERSION" ]; then
		mkdir -p "$(dirname "$DATA_DIR")"
		init_cluster "$DATA_DIR"
	fi
	as_pg "$BIN_DIR/pg_ctl" -D "$DATA_DIR" -l "$DATA_DIR/server.log" -w -t 60 start >/dev/null 2>&1 ||
		die "PostgreSQL did not start; see $DATA_DIR/server.log"
	say "PostgreSQL ($MODE) running on 127.0.0.1:$PORT (data: $DATA_DIR)."
}

cmd_down() {
	if is_running; then
		as_pg "$BIN_DIR/pg_ctl" -D "$DATA_DIR" -m fast -w -t 60 stop >/dev/null
		say "PostgreSQL ($MODE) stopped."
	else
		say "PostgreSQL ($MODE) is not running."
	fi
	if [ "$MODE" = test ]; then remove_test_cluster; fi
}

# Deletes the throwaway folder, but only one that this script made.
remove_test_cluster() {
	local parent
	if [ -n "$DATA_DIR" ]; then
		parent="$(dirname "$DATA_DIR")"
		case "$(basename "$parent")" in
		cellsitter-pgtest.*) rm -rf "$parent" ;;
		*) say "Not deleting $DATA_DIR: it is not a folder made by pg.sh." ;;
		esac
	fi
	rm -f "$(test_dir_record)"
}

cmd_status() {
	if is_running; then
		say "PostgreSQL ($MODE) is running on 127.0.0.1:$PORT (data: $DATA_DIR)."
		database_url
	else
		say "PostgreSQL ($MODE) is not running. Start it with: bash scripts/pg.sh up${MODE_FLAG:+ $MODE_FLAG}"
		exit 3
	fi
}

main() {
	local command="${1:-}"
	MODE=dev
	MODE_FLAG=
	case "${2:-}" in
	"") ;;
	--test) MODE=test MODE_FLAG=--test ;;
	*) usage ;;
	esac
	[ $# -le 2 ] || usage
	configure
	case "$command" in
	up)
		require_bin_dir
		locate_data_dir
		cmd_up
		;;
	down | status)
		# Nothing to stop or report when the server was never installed.
		BIN_DIR="$(find_bin_dir)"
		if [ -z "$BIN_DIR" ]; then
			say "PostgreSQL is not installed, so no $MODE database is running."
			[ "$command" = down ] || exit 3
			return
		fi
		locate_data_dir
		"cmd_$command"
		;;
	url) database_url ;;
	*) usage ;;
	esac
}

main "$@"
