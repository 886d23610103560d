#!/usr/bin/env bash
# `npm test`: every suite, on a throwaway database, against the built app.
#
#   bash scripts/test.sh              svelte-check, unit, integration, browser (e2e)
#   bash scripts/test.sh unit|integration|e2e    one part only
#   bash scripts/test.sh e2e tests/e2e/x.test.ts  browser tests of some files (Playwright arguments;
#                                                  a running test cluster is used and left running)
#   bash scripts/test.sh stress       `npm run test:stress`: the tests with a stress size at full size
#                                     (CELLSITTER_STRESS=1), on a fresh test cluster
#
# Installs what is missing (npm packages, PostgreSQL, Debian's chromium when root), stops
# everything it started, and ends with one line `N passed, N failed` summing all suites
# (svelte-check counts as one test). Exit status is non-zero on any failure.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/common.sh"
cd "$PROJECT_DIR"

# Ports of the test run: apart from npm start's (3000 / 9410 / 2525 / 9443 / 54329), so tests can
# run while the app is up.
readonly E2E_PORT=3100
readonly E2E_URL="http://127.0.0.1:$E2E_PORT"
readonly FAKES_HTTP_PORT=9420
readonly FAKES_SMTP_PORT=2535
readonly FAKES_PUSH_PORT=9453
readonly FAKES_URL_TEST="http://127.0.0.1:$FAKES_HTTP_PORT"
readonly SMTP_URL_TEST="smtp://127.0.0.1:$FAKES_SMTP_PORT"
# Reports and logs stay here after the run (git ignores it); data goes to RUN_DIR.
readonly REPORT_DIR="$PROJECT_DIR/test-results"
# `stress`: the test files that read CELLSITTER_STRESS=1 for their full sizes (integration files
# first, then browser files: kill and restart, two instances).
readonly STRESS_INTEGRATION_FILES=(tests/integration/hostile-fuzz.test.ts tests/integration/alerts-raise.test.ts)
readonly STRESS_E2E_FILES=(tests/e2e/crash-safety.test.ts tests/e2e/two-instances.test.ts)

RUN_DIR=
SERVER_PID=
FAKES_PID=
PG_STARTED=
TEST_DATABASE_URL=
PASSED=0
FAILED=0
SUITE_LINES=()
SUMMARY_PRINTED=

# ---------------------------------------------------------------------------
# Counting
# ---------------------------------------------------------------------------

record() {
	local suite="$1" passed="$2" failed="$3"
	PASSED=$((PASSED + passed))
	FAILED=$((FAILED + failed))
	SUITE_LINES+=("$(printf '  %-13s %s passed, %s failed' "$suite" "$passed" "$failed")")
}

# Prints "passed failed" from a vitest JSON or Playwright JSON report. A suite whose
# command failed counts at least 1 failure even when its report shows none (a file that
# did not load, a crash, no tests found); a missing report counts as 0 passed, 1 failed.
count_report() {
	local kind="$1" report="$2" exit_code="$3"
	node -e '
		const fs = require("node:fs");
		const [kind, report, exitCode] = process.argv.slice(1);
		let passed = 0, failed = 0;
		try {
			const r = JSON.parse(fs.readFileSync(report, "utf8"));
			if (kind === "vitest") {
				passed = r.numPassedTests ?? 0;
				failed = r.numFailedTests ?? 0;
			} else {
				const s = r.stats ?? {};
				passed = (s.expected ?? 0) + (s.flaky ?? 0);
				failed = s.unexpected ?? 0;
				if ((r.errors ?? []).length > 0 && failed === 0) failed = 1;
			}
		} catch {
			failed = 1;
		}
		if (Number(exitCode) !== 0 && failed === 0) failed = 1;
		console.log(`${passed} ${failed}`);
	' "$kind" "$report" "$exit_code"
}

print_summary() {
	SUMMARY_PRINTED=1
	printf '\nSuites:\n'
	if [ "${#SUITE_LINES[@]}" -gt 0 ]; then printf '%s\n' "${SUITE_LINES[@]}"; fi
	printf '%s passed, %s failed\n' "$PASSED" "$FAILED"
}

# ---------------------------------------------------------------------------
# Set-up and clean-up
# ---------------------------------------------------------------------------

cleanup() {
	stop_pid "$SERVER_PID" "test server" 15
	SERVER_PID=
	stop_pid "$FAKES_PID" "local fakes"
	FAKES_PID=
	if [ -n "$PG_STARTED" ]; then
		bash scripts/pg.sh down --test >/dev/null 2>&1 || say "Could not stop the test database: bash scripts/pg.sh down --test"
		PG_STARTED=
	fi
	if [ -n "$RUN_DIR" ]; then rm -rf "$RUN_DIR"; fi
	RUN_DIR=
}

on_exit() {
	local code=$?
	cleanup
	if [ -z "$SUMMARY_PRINTED" ]; then
		# Interrupted or aborted before the end: what did not run counts as failed.
		say "The test run stopped early."
		FAILED=$((FAILED + 1))
		print_summary
		[ "$code" -ne 0 ] || code=1
	fi
	exit "$code"
}

ensure_chromium() {
	[ -x /usr/bin/chromium ] && return 0
	if [ "$(id -u)" -ne 0 ]; then
		say "The browser tests need Debian's chromium at /usr/bin/chromium. Install it once:"
		say "    sudo apt-get install chromium"
		return 1
	fi
	say "Installing Debian's chromium for the browser tests (apt-get)..."
	DEBIAN_FRONTEND=noninteractive apt-get update -qq </dev/null &&
		DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium </dev/null >/dev/null
}

# A fresh throwaway cluster per run. One left over by an earlier, interrupted run in
# this project (recorded under .data) is stopped and deleted first.
# A run of some browser test files (`e2e <files>`) uses the test cluster as it is (starting it when
# it is not running) and leaves it running, so integration tests run beside it keep their
# database; every test makes its own accounts.
REUSE_RUNNING_DB=
start_test_database() {
	if [ -n "$REUSE_RUNNING_DB" ]; then
		if bash scripts/pg.sh status --test >/dev/null 2>&1; then
			say "Using the test database that is already running (and leaving it running)."
		else
			# It outlives this run: it must not hold any file this run was given (a lock taken by
			# `flock … bash scripts/test.sh` would stay taken as long as the database runs).
			(
				for fd in /proc/self/fd/*; do
					fd="${fd##*/}"
					if [ "$fd" -gt 2 ] 2>/dev/null; then eval "exec $fd>&-" 2>/dev/null || true; fi
				done
				bash scripts/pg.sh up --test
			) || return 1
			say "The test database stays running after these tests: bash scripts/pg.sh down --test stops it."
		fi
		TEST_DATABASE_URL="$(bash scripts/pg.sh url --test)"
		return 0
	fi
	if bash scripts/pg.sh status --test >/dev/null 2>&1; then
		say "A test database from an earlier run is still running; replacing it with a fresh one."
	fi
	bash scripts/pg.sh down --test >/dev/null 2>&1 || return 1
	PG_STARTED=1
	bash scripts/pg.sh up --test || return 1
	TEST_DATABASE_URL="$(bash scripts/pg.sh url --test)"
}

# Environment the app's code sees in integration tests and in the test server.
export_test_env() {
	export DATABASE_URL="$TEST_DATABASE_URL"
	export CELLSITTER_FAKES=1 FAKES_URL="$FAKES_URL_TEST" TEST_FAKES_URL="$FAKES_URL_TEST" SMTP_URL="$SMTP_URL_TEST"
	export BODY_SIZE_LIMIT=12M ORIGIN="$E2E_URL"
	# Node closes an idle kept-alive connection after 5 s; a test's request sent on it at that very
	# moment fails with ECONNRESET (seen once on CI). The test servers keep idle connections longer.
	export KEEP_ALIVE_TIMEOUT=120
	# No demo workshop in tests: they make their own accounts.
	unset CELLSITTER_DEMO CELLSITTER_DEMO_PASSWORD
}

# The services integration and browser tests need: database and fakes (started once).
SERVICES_READY=
SERVICES_OK=
start_services() {
	if [ -z "$SERVICES_READY" ]; then
		SERVICES_READY=1
		if start_test_database && start_fakes "$FAKES_SMTP_PORT" "$FAKES_HTTP_PORT" "$FAKES_PUSH_PORT" "$REPORT_DIR/fakes.log"; then
			SERVICES_OK=1
			export_test_env
		else
			say "Could not start the test database or the local fakes (see above)."
		fi
	fi
	[ -n "$SERVICES_OK" ]
}

# ---------------------------------------------------------------------------
# Suites
# ---------------------------------------------------------------------------

heading() { printf '\n=== %s ===\n' "$*"; }

run_svelte_check() {
	heading "svelte-check"
	if "$BIN/svelte-kit" sync && "$BIN/svelte-check" --tsconfig ./tsconfig.json --output machine; then
		record svelte-check 1 0
	else
		record svelte-check 0 1
	fi
}

# run_vitest <project> [files]: one vitest project (or some of its files) with its JSON report.
run_vitest() {
	local project="$1" report="$REPORT_DIR/$1.json" code=0 counts
	shift
	heading "$project tests (vitest)"
	rm -f "$report"
	"$BIN/vitest" run --project "$project" --reporter=default --reporter=json \
		--outputFile.json="$report" "$@" </dev/null || code=$?
	counts="$(count_report vitest "$report" "$code")"
	record "$project" "${counts% *}" "${counts#* }"
}

run_unit() { run_vitest unit; }

run_integration() {
	if ! start_services; then
		record integration 0 1
		return
	fi
	CELLSITTER_DATA_DIR="$RUN_DIR/integration-data" run_vitest integration "$@"
}

# The app under test is built into its own folder, so a running `npm start` keeps its files.
TEST_BUILD_DIR=".data/test-build"

build_app() {
	heading "build (vite build)"
	CELLSITTER_BUILD_DIR="$TEST_BUILD_DIR" build_app_quietly
}

start_test_server() {
	local log="$REPORT_DIR/server.log"
	if port_in_use "$E2E_PORT"; then
		say "Port $E2E_PORT on 127.0.0.1 is taken by another program, so the browser tests cannot start the app there. Free it and run the tests again."
		return 1
	fi
	mkdir -p "$RUN_DIR/e2e-data"
	PORT="$E2E_PORT" HOST=127.0.0.1 CELLSITTER_DATA_DIR="$RUN_DIR/e2e-data" \
		node "$TEST_BUILD_DIR" </dev/null >"$log" 2>&1 &
	SERVER_PID=$!
	if ! wait_for_http "$E2E_URL/" 90 "$SERVER_PID"; then
		say "The built app did not come up on $E2E_URL; the end of its log ($log):"
		tail -n 40 "$log" >&2 || true
		return 1
	fi
}

run_e2e() {
	local report="$REPORT_DIR/e2e.json" code=0 counts
	rm -f "$report"
	if ! start_services || ! ensure_chromium || ! build_app || ! start_test_server; then
		say "The browser tests could not run (see above)."
		record e2e 0 1
		return
	fi
	heading "browser tests (Playwright, chromium)"
	# Any further arguments (files, -g PATTERN) go to Playwright: `bash scripts/test.sh e2e tests/e2e/x.test.ts`.
	E2E_BASE_URL="$E2E_URL" E2E_JSON_REPORT="$report" "$BIN/playwright" test "$@" </dev/null || code=$?
	counts="$(count_report playwright "$report" "$code")"
	record e2e "${counts% *}" "${counts#* }"
	if [ "${counts#* }" != 0 ]; then
		say "Server log: $REPORT_DIR/server.log; traces and screenshots: $REPORT_DIR/e2e/"
	fi
	stop_pid "$SERVER_PID" "test server" 15
	SERVER_PID=
}

# ---------------------------------------------------------------------------

main() {
	local part="${1:-all}"
	case "$part" in
	all | unit | integration | e2e | stress) ;;
	*)
		say "Usage: bash scripts/test.sh [unit|integration|e2e [playwright arguments]|stress]"
		exit 2
		;;
	esac

	trap on_exit EXIT
	trap 'exit 130' INT TERM
	RUN_DIR="$(mktemp -d "${TMPDIR:-/tmp}/cellsitter-test.XXXXXX")"
	mkdir -p "$REPORT_DIR"
	ensure_data_dir
	ensure_node_modules

	case "$part" in
	all)
		run_svelte_check
		run_unit
		run_integration
		run_e2e
		;;
	unit) run_unit ;;
	integration) run_integration ;;
	e2e)
		shift
		if [ "$#" -gt 0 ]; then REUSE_RUNNING_DB=1; fi
		run_e2e "$@"
		;;
	stress)
		export CELLSITTER_STRESS=1
		if [ "${#STRESS_INTEGRATION_FILES[@]}" -gt 0 ]; then run_integration "${STRESS_INTEGRATION_FILES[@]}"; fi
		run_e2e "${STRESS_E2E_FILES[@]}"
		;;
	esac

	cleanup
	print_summary
	[ "$FAILED" -eq 0 ]
}

main "$@"
