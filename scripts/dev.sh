#!/usr/bin/env bash
# `npm run dev`: vite's dev server with hot reload, on the same local database and fakes
# as `npm start`. Stopping vite also stops the fakes this script started.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/common.sh"
cd "$PROJECT_DIR"

readonly FAKES_HTTP_PORT=9410
readonly FAKES_SMTP_PORT=2525
readonly FAKES_PUSH_PORT=9443

FAKES_PID=
trap 'stop_pid "$FAKES_PID" "local fakes"' EXIT
trap 'exit 130' INT TERM

main() {
	ensure_data_dir
	ensure_node_modules
	bash scripts/pg.sh up

	local password
	password="$(demo_password)"
	start_fakes "$FAKES_SMTP_PORT" "$FAKES_HTTP_PORT" "$FAKES_PUSH_PORT" "$DATA_DIR/fakes.log" reuse

	export DATABASE_URL
	DATABASE_URL="$(bash scripts/pg.sh url)"
	# Links in e-mails (reset, invitation) are built from ORIGIN: vite's own address.
	export ORIGIN=http://127.0.0.1:5173 BODY_SIZE_LIMIT=12M CELLSITTER_DATA_DIR="$DATA_DIR"
	export CELLSITTER_FAKES=1 FAKES_URL="http://127.0.0.1:$FAKES_HTTP_PORT" SMTP_URL="smtp://127.0.0.1:$FAKES_SMTP_PORT"
	export CELLSITTER_DEMO=1 CELLSITTER_DEMO_PASSWORD="$password"

	print_demo_sign_ins "$password"
	printf '\n'
	# vite itself, not through npx: killing an npx wrapper leaves vite running.
	"$BIN/vite" dev --host 127.0.0.1
}

main "$@"
