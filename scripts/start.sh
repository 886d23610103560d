#!/usr/bin/env bash
# `npm start`: everything a newcomer needs, then the built app on http://127.0.0.1:3000.
#
# Installs what is missing (npm packages, PostgreSQL), starts the project's database and the
# local fakes (mail, sign-in provider, push service), builds, and serves. The server applies migrations
# and loads the demo workshop itself. Ctrl-C stops the server and the fakes; the database
# keeps running until `npm run db:stop`.
#
# CELLSITTER_HTTPS=1 npm start: over HTTPS with a certificate made on this computer (scripts/https.js,
# docs/deploy.md), still on 127.0.0.1 unless HOST=0.0.0.0 asks to answer phones on the network.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/common.sh"
cd "$PROJECT_DIR"

readonly APP_PORT=3000
readonly HTTPS="${CELLSITTER_HTTPS:-}"
if [ "$HTTPS" = 1 ]; then
	readonly APP_HOST="${HOST:-127.0.0.1}"
	# What this script checks the server with; people open ORIGIN (printed at the end).
	readonly APP_URL="https://127.0.0.1:$APP_PORT"
else
	readonly APP_HOST=127.0.0.1
	readonly APP_URL="http://127.0.0.1:$APP_PORT"
fi
CA_FILE=
readonly FAKES_HTTP_PORT=9410
readonly FAKES_SMTP_PORT=2525
readonly FAKES_PUSH_PORT=9443

SERVER_PID=
FAKES_PID=

cleanup() {
	stop_pid "$SERVER_PID" "Cellsitter server" 15
	SERVER_PID=
	stop_pid "$FAKES_PID" "local fakes"
	FAKES_PID=
}
trap cleanup EXIT
# Background children of a script ignore Ctrl-C; the trap stops them by PID.
trap 'say ""; say "Stopping Cellsitter (the database keeps running; npm run db:stop stops it)."; exit 130' INT TERM

refuse_if_port_taken() {
	if port_in_use "$APP_PORT"; then
		say "Port $APP_PORT on 127.0.0.1 is already in use: is Cellsitter already running (npm start in another terminal)?"
		say "Open $APP_URL, or stop that program (Ctrl-C in its terminal) and run npm start again."
		exit 1
	fi
}

build_app() {
	say "Building the app (vite build)..."
	if ! build_app_quietly; then
		say "The build failed (see above)."
		exit 1
	fi
}

start_server() {
	local log="$DATA_DIR/server.log"
	say "Starting the server (log: $log)..."
	# `node build` directly: killing the PID of an npm/npx wrapper would leave the server behind.
	if [ "$HTTPS" = 1 ]; then
		node scripts/https.js </dev/null > >(tee "$log") 2>&1 &
	else
		node build </dev/null > >(tee "$log") 2>&1 &
	fi
	SERVER_PID=$!
	# Over HTTPS the check trusts the local authority, as a phone that installed it does.
	if ! NODE_EXTRA_CA_CERTS="$CA_FILE" wait_for_http "$APP_URL/" 120 "$SERVER_PID"; then
		say "The server did not come up on $APP_URL; the end of its log:"
		tail -n 40 "$log" >&2 || true
		exit 1
	fi
}

main() {
	ensure_data_dir
	ensure_node_modules
	refuse_if_port_taken
	bash scripts/pg.sh up

	local database_url password
	database_url="$(bash scripts/pg.sh url)"
	password="$(demo_password)"

	start_fakes "$FAKES_SMTP_PORT" "$FAKES_HTTP_PORT" "$FAKES_PUSH_PORT" "$DATA_DIR/fakes.log" reuse

	export PORT="$APP_PORT" HOST="$APP_HOST"
	if [ "$HTTPS" = 1 ]; then
		CA_FILE="$(node scripts/https.js --certificate)"
		ORIGIN="$(node scripts/https.js --origin)"
		export ORIGIN
	else
		export ORIGIN="$APP_URL"
	fi
	export DATABASE_URL="$database_url" BODY_SIZE_LIMIT=12M CELLSITTER_DATA_DIR="$DATA_DIR"
	export CELLSITTER_FAKES=1 FAKES_URL="http://127.0.0.1:$FAKES_HTTP_PORT" SMTP_URL="smtp://127.0.0.1:$FAKES_SMTP_PORT"
	export CELLSITTER_DEMO=1 CELLSITTER_DEMO_PASSWORD="$password"

	build_app
	refuse_if_port_taken
	start_server

	printf '\nCellsitter is running at %s\n' "$ORIGIN"
	if [ "$HTTPS" = 1 ]; then
		printf 'Over HTTPS with a certificate made on this computer. To trust it on a phone, install %s\n' "$CA_FILE"
		printf '(also offered at %s/cellsitter-ca.crt); docs/deploy.md has the steps.\n' "$ORIGIN"
	fi
	print_demo_sign_ins "$password"
	printf '\nMail and push notifications sent by the app land in the local mailbox: %s/fakes/mailbox\n' "$ORIGIN"
	printf 'Press Ctrl-C to stop. The database keeps running; npm run db:stop stops it.\n\n'

	local status=0
	wait "$SERVER_PID" || status=$?
	SERVER_PID=
	if [ "$status" -ne 0 ]; then say "The server stopped with exit code $status; see $DATA_DIR/server.log."; fi
	exit "$status"
}

main "$@"
