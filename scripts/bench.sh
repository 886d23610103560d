#!/usr/bin/env bash
# `npm run bench`: the performance figures of docs/performance.md, measured and written there.
#
# Builds a copy of the working tree (or CELLSITTER_BENCH_REF=<commit>) in a temporary folder (never
# build/, which `npm start` serves), runs the engine's vitest benchmarks there, starts a database of its own on the throwaway test cluster (scripts/pg.sh
# --test), measures alert delivery (bench/alerts.mjs: the built server with its background jobs
# and the local fakes of the mail and push services, on free ports), starts the built server on a
# free port with CELLSITTER_BENCH=1 (the bare route), seeds the
# demo workshop and bench sessions, measures (bench/run.mjs), checks the build over HTTPS
# (scripts/https.js), and rewrites docs/performance.md (bench/report.mjs). Everything it started is
# stopped by PID; the test cluster is stopped only when this script started it.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/common.sh"
cd "$PROJECT_DIR"

WORK=
BENCH_SOURCE=
SERVER_PID=
HTTPS_PID=
ALERTS_PID=
FAKES_PID=
PG_STARTED=
ADMIN_URL=
BENCH_DB=

cleanup() {
	stop_pid "$SERVER_PID" "bench server" 15
	SERVER_PID=
	stop_pid "$HTTPS_PID" "bench HTTPS server" 15
	HTTPS_PID=
	stop_pid "$ALERTS_PID" "alert bench server" 15
	ALERTS_PID=
	stop_pid "$FAKES_PID" "local fakes" 15
	FAKES_PID=
	if [ -n "$BENCH_DB" ] && [ -n "$ADMIN_URL" ]; then
		sql_admin "drop database if exists $BENCH_DB with (force)" || say "Could not drop the bench database $BENCH_DB."
		BENCH_DB=
	fi
	if [ -n "$PG_STARTED" ]; then
		bash scripts/pg.sh down --test >/dev/null 2>&1 || say "Could not stop the test database: bash scripts/pg.sh down --test"
		PG_STARTED=
	fi
	if [ -n "$WORK" ]; then rm -rf "$WORK"; fi
	WORK=
}
trap cleanup EXIT
trap 'exit 130' INT TERM

heading() { printf '\n=== %s ===\n' "$*"; }

free_port() {
	node -e 'const s = require("node:net").createServer().listen(0, "127.0.0.1", () => { console.log(s.address().port); s.close(); });'
}

# One statement on the test cluster's own database (creating and dropping the bench database).
sql_admin() {
	node --input-type=module -e '
		import postgres from "postgres";
		const sql = postgres(process.argv[1], { max: 1, onnotice: () => {} });
		try { await sql.unsafe(process.argv[2]); } finally { await sql.end(); }
	' "$ADMIN_URL" "$1"
}

# The source measured: a copy of the working tree (tracked and new files, as git sees them), or with
# CELLSITTER_BENCH_REF=<commit> that commit. A copy keeps the build away from files someone is
# editing and from the .svelte-kit folder the dev server and other builds use.
copy_source() {
	heading "source (${CELLSITTER_BENCH_REF:-working tree})"
	mkdir -p "$WORK/src"
	if [ -n "${CELLSITTER_BENCH_REF:-}" ]; then
		BENCH_SOURCE="commit $(git rev-parse --short "$CELLSITTER_BENCH_REF")"
	elif [ -n "$(git status --porcelain 2>/dev/null)" ]; then
		BENCH_SOURCE="working tree at commit $(git rev-parse --short HEAD), with uncommitted changes"
	else
		BENCH_SOURCE="commit $(git rev-parse --short HEAD)"
	fi
	if [ -n "${CELLSITTER_BENCH_REF:-}" ]; then
		git archive "$CELLSITTER_BENCH_REF" | tar -x -C "$WORK/src"
	else
		git ls-files -z --cached --others --exclude-standard |
			tar --null --ignore-failed-read -T - -cf - 2>/dev/null | tar -x -C "$WORK/src"
	fi
	# The built server and the copy both find their packages here.
	ln -s "$PROJECT_DIR/node_modules" "$WORK/node_modules"
	ln -s "$PROJECT_DIR/node_modules" "$WORK/src/node_modules"
}

build() {
	heading "build (vite build of the copy)"
	if ! (cd "$WORK/src" && CELLSITTER_BUILD_DIR="$WORK/build" build_app_quietly); then
		say "The build failed (see above)."
		exit 1
	fi
	cp "$WORK/src/.svelte-kit/output/client/.vite/manifest.json" "$WORK/vite-manifest.json"
}

engine_benchmarks() {
	heading "engine (vitest bench)"
	(cd "$WORK/src" && CELLSITTER_BENCH_NOTES="$WORK/engine-notes.jsonl" "$BIN/vitest" bench --run --project unit \
		--outputJson "$WORK/engine.json" </dev/null)
}

start_database() {
	heading "database"
	if ! bash scripts/pg.sh status --test >/dev/null 2>&1; then PG_STARTED=1; fi
	bash scripts/pg.sh up --test
	ADMIN_URL="$(bash scripts/pg.sh url --test)"
	BENCH_DB="cellsitter_bench_$$"
	sql_admin "create database $BENCH_DB"
	BENCH_DATABASE_URL="${ADMIN_URL%/*}/$BENCH_DB"
}

# The built app with the bench's environment: its own data folder, the demo (loaded into the empty
# database), no background jobs (they would add load of their own), the bare route on.
# Only ever run in the background (`server_env … &`): `exec` makes $! the server's own PID, so
# stop_pid stops the server and not just the subshell around it.
server_env() {
	exec env -u CELLSITTER_FAKES -u FAKES_URL -u SMTP_URL \
		DATABASE_URL="$BENCH_DATABASE_URL" HOST=127.0.0.1 CELLSITTER_DATA_DIR="$WORK/data" \
		CELLSITTER_DEMO=1 CELLSITTER_DEMO_PASSWORD="bench-$(node -e 'console.log(require("node:crypto").randomBytes(9).toString("base64url"))')" \
		CELLSITTER_JOBS=off CELLSITTER_BENCH=1 BODY_SIZE_LIMIT=12M "$@"
}

start_server() {
	heading "server"
	local port
	port="$(free_port)"
	BASE_URL="http://127.0.0.1:$port"
	mkdir -p "$WORK/data"
	server_env PORT="$port" ORIGIN="$BASE_URL" node "$WORK/build" </dev/null >"$WORK/server.log" 2>&1 &
	SERVER_PID=$!
	if ! wait_for_http "$BASE_URL/" 120 "$SERVER_PID"; then
		say "The built app did not come up on $BASE_URL; the end of its log:"
		tail -n 40 "$WORK/server.log" >&2 || true
		exit 1
	fi
	say "Built app on $BASE_URL (PID $SERVER_PID)."
}

# Alert delivery (bench/alerts.mjs): the same build with its background jobs in-process (the
# default) and the local fakes (tests/fakes/server.js) on free ports, before the HTTP part: the
# delivery queue starts empty, and the HTTP part's load data (which raises alerts of its own) is
# not there yet. If this part fails, the bench goes on and the page says "not measured".
alert_delivery() {
	heading "alert delivery (bench/alerts.mjs)"
	local smtp_port http_port push_port port tries=0
	until [ "$tries" -ge 3 ]; do
		tries=$((tries + 1))
		smtp_port="$(free_port)" http_port="$(free_port)" push_port="$(free_port)"
		if [ "$smtp_port" != "$http_port" ] && [ "$http_port" != "$push_port" ] && [ "$smtp_port" != "$push_port" ] &&
			start_fakes "$smtp_port" "$http_port" "$push_port" "$WORK/fakes.log"; then
			break
		fi
	done
	if [ -z "$FAKES_PID" ]; then
		say "Alert delivery not measured: the local fakes did not start."
		return 0
	fi
	port="$(free_port)"
	server_env PORT="$port" ORIGIN="http://127.0.0.1:$port" CELLSITTER_JOBS=in-process CELLSITTER_FAKES=1 \
		FAKES_URL="http://127.0.0.1:$http_port" SMTP_URL="smtp://127.0.0.1:$smtp_port" \
		node "$WORK/build" </dev/null >"$WORK/alerts-server.log" 2>&1 &
	ALERTS_PID=$!
	if wait_for_http "http://127.0.0.1:$port/" 120 "$ALERTS_PID"; then
		BENCH_BASE_URL="http://127.0.0.1:$port" BENCH_DATABASE_URL="$BENCH_DATABASE_URL" BENCH_FAKES_URL="http://127.0.0.1:$http_port" \
			BENCH_SOURCE_DIR="$WORK/src" BENCH_OUT="$WORK/alerts.json" node bench/alerts.mjs </dev/null ||
			say "Alert delivery not measured: bench/alerts.mjs failed (above; the server's log: $WORK/alerts-server.log)."
	else
		say "Alert delivery not measured: the built app with jobs did not come up; the end of its log:"
		tail -n 40 "$WORK/alerts-server.log" >&2 || true
	fi
	stop_pid "$ALERTS_PID" "alert bench server" 15
	ALERTS_PID=
	stop_pid "$FAKES_PID" "local fakes" 15
	FAKES_PID=
}

# The same build through scripts/https.js, `/` fetched trusting only the generated authority.
https_check() {
	heading "HTTPS check (scripts/https.js)"
	local port
	port="$(free_port)"
	server_env PORT="$port" CELLSITTER_BUILD_DIR="$WORK/build" CELLSITTER_TLS_DIR="$WORK/tls" \
		node scripts/https.js </dev/null >"$WORK/https.log" 2>&1 &
	HTTPS_PID=$!
	node --input-type=module -e '
		import fs from "node:fs";
		import https from "node:https";
		const [port, dir, out, pid] = process.argv.slice(1);
		const deadline = Date.now() + 90_000;
		let result = { ok: false, error: "no answer within 90 s" };
		while (Date.now() < deadline) {
			try { process.kill(Number(pid), 0); } catch { result = { ok: false, error: "the HTTPS server exited" }; break; }
			if (fs.existsSync(`${dir}/cellsitter-ca.crt`)) {
				const ca = fs.readFileSync(`${dir}/cellsitter-ca.crt`);
				const answer = await new Promise((resolve) => {
					https.get(`https://127.0.0.1:${port}/`, { ca }, (res) => { res.resume(); resolve({ ok: res.statusCode < 500, status: res.statusCode }); })
						.on("error", (e) => resolve({ ok: false, error: e.message }));
				});
				if (answer.ok || (answer.error && !/ECONNREFUSED/.test(answer.error))) { result = answer; break; }
			}
			await new Promise((r) => setTimeout(r, 300));
		}
		fs.writeFileSync(out, JSON.stringify(result));
		console.log(result.ok ? `HTTPS: ${result.status} with the generated authority` : `HTTPS check failed: ${result.error}`);
	' "$port" "$WORK/tls" "$WORK/https.json" "$HTTPS_PID"
	stop_pid "$HTTPS_PID" "bench HTTPS server" 15
	HTTPS_PID=
}

main() {
	ensure_data_dir
	ensure_node_modules
	WORK="$(mktemp -d "${TMPDIR:-/tmp}/cellsitter-bench.XXXXXX")"
	copy_source
	build
	engine_benchmarks
	start_database
	alert_delivery
	start_server
	heading "HTTP and database (bench/run.mjs)"
	BENCH_BASE_URL="$BASE_URL" BENCH_DATABASE_URL="$BENCH_DATABASE_URL" BENCH_BUILD_DIR="$WORK/build" BENCH_ALERTS_JSON="$WORK/alerts.json" \
		BENCH_VITE_MANIFEST="$WORK/vite-manifest.json" BENCH_OUT="$WORK/http.json" BENCH_SOURCE="$BENCH_SOURCE" node bench/run.mjs </dev/null
	stop_pid "$SERVER_PID" "bench server" 15
	SERVER_PID=
	https_check
	heading "figures (written to docs/performance.md)"
	# The raw figures stay in .data/bench (git ignores it): node bench/report.mjs renders them again.
	mkdir -p "$DATA_DIR/bench"
	cp "$WORK/http.json" "$WORK/engine.json" "$WORK/engine-notes.jsonl" "$WORK/https.json" "$DATA_DIR/bench/"
	node bench/report.mjs "$DATA_DIR/bench/http.json" "$DATA_DIR/bench/engine.json" "$DATA_DIR/bench/engine-notes.jsonl" \
		"$DATA_DIR/bench/https.json" docs/performance.md
}

main "$@"
