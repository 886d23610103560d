# Helpers shared by start.sh, dev.sh and test.sh (sourced, not run).
# Every process these scripts start is remembered by PID and stopped by that PID only.

PROJECT_DIR="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
DATA_DIR="$PROJECT_DIR/.data"
BIN="$PROJECT_DIR/node_modules/.bin"

say() { printf '%s\n' "$*" >&2; }

# .data holds the dev database (unless pg.sh had to move it) and the demo password.
# 0711: the `postgres` OS user may pass through to .data/pg but not list the folder.
ensure_data_dir() {
	if [ ! -d "$DATA_DIR" ]; then
		mkdir -p "$DATA_DIR"
		chmod 711 "$DATA_DIR"
	fi
}

# npm ci when node_modules is missing or older than package-lock.json.
ensure_node_modules() {
	local marker="$PROJECT_DIR/node_modules/.package-lock.json"
	if [ -f "$marker" ] && [ ! "$PROJECT_DIR/package-lock.json" -nt "$marker" ]; then
		return 0
	fi
	say "Installing npm dependencies (npm ci)..."
	(cd "$PROJECT_DIR" && npm ci --no-audit --no-fund </dev/null)
}

# True when something accepts TCP connections on 127.0.0.1:<port>.
port_in_use() { (exec 3<>"/dev/tcp/127.0.0.1/$1") 2>/dev/null; }

# Waits until <url> answers with any HTTP status (the server is listening). Gives up
# after <seconds>, or as soon as process <pid> (optional) has died. Uses node's fetch:
# curl may be missing on a fresh machine.
wait_for_http() {
	local url="$1" seconds="$2" pid="${3:-}"
	node --input-type=module -e '
		const [url, seconds, pid] = process.argv.slice(1);
		const deadline = Date.now() + Number(seconds) * 1000;
		for (;;) {
			try {
				const response = await fetch(url, { redirect: "manual", signal: AbortSignal.timeout(5000) });
				if (response.status > 0) process.exit(0);
			} catch {}
			if (pid) {
				try { process.kill(Number(pid), 0); } catch { process.exit(2); }
			}
			if (Date.now() > deadline) process.exit(1);
			await new Promise((resolve) => setTimeout(resolve, 200));
		}
	' "$url" "$seconds" "$pid"
}

# Stops a process this script started: SIGTERM, then SIGKILL after <seconds> (default 10).
stop_pid() {
	local pid="$1" name="$2" seconds="${3:-10}" waited=0
	[ -n "$pid" ] || return 0
	kill -0 "$pid" 2>/dev/null || return 0
	kill -TERM "$pid" 2>/dev/null || true
	while kill -0 "$pid" 2>/dev/null && [ "$waited" -lt $((seconds * 10)) ]; do
		sleep 0.1
		waited=$((waited + 1))
	done
	if kill -0 "$pid" 2>/dev/null; then
		say "$name (PID $pid) did not stop within ${seconds}s; killing it."
		kill -KILL "$pid" 2>/dev/null || true
	fi
	wait "$pid" 2>/dev/null || true
}

# Starts tests/fakes/server.js in the background on the given ports and sets FAKES_PID.
# When fakes already answer on <http port> (another `npm start` / `npm run dev`), they are
# reused if <reuse> is "reuse" and FAKES_PID stays empty (not ours to stop).
start_fakes() {
	local smtp_port="$1" http_port="$2" push_port="$3" log="$4" reuse="${5:-}"
	FAKES_PID=
	if port_in_use "$http_port" || port_in_use "$smtp_port" || port_in_use "$push_port"; then
		if [ "$reuse" = reuse ] && wait_for_http "http://127.0.0.1:$http_port/health" 2 && port_in_use "$smtp_port" && port_in_use "$push_port"; then
			say "Local fakes already running on 127.0.0.1:$http_port / :$smtp_port / :$push_port; using them."
			return 0
		fi
		say "Port $http_port, $smtp_port or $push_port on 127.0.0.1 is taken by another program, so the local fakes cannot start."
		say "Free those ports (find the program with: ss -ltnp) and try again."
		return 1
	fi
	FAKE_SMTP_PORT="$smtp_port" FAKE_HTTP_PORT="$http_port" FAKE_PUSH_PORT="$push_port" \
		node "$PROJECT_DIR/tests/fakes/server.js" </dev/null >"$log" 2>&1 &
	FAKES_PID=$!
	if ! wait_for_http "http://127.0.0.1:$http_port/health" 15 "$FAKES_PID"; then
		say "The local fakes did not start; their output:"
		cat "$log" >&2 || true
		stop_pid "$FAKES_PID" "fakes"
		FAKES_PID=
		return 1
	fi
}

# vite build, without the "Circular dependency: node_modules/..." lines that libraries
# produce by the hundred (nothing we can act on); every other message is shown.
build_app_quietly() {
	local status
	set +e
	"$BIN/vite" build --logLevel warn </dev/null 2>&1 | { grep -v '^Circular dependency: node_modules/' || true; }
	status="${PIPESTATUS[0]}"
	set -e
	return "$status"
}

# The demo password: made once, kept in .data/demo-password (owner-only), reused after.
demo_password() {
	local file="$DATA_DIR/demo-password"
	if [ ! -s "$file" ]; then
		ensure_data_dir
		(
			umask 077
			node -e '
				const { randomInt } = require("node:crypto");
				const words = ["amber", "anode", "balance", "cobalt", "copper", "current", "delta", "ember",
					"ferrite", "graphite", "harbor", "iron", "kelvin", "lantern", "maple", "meadow", "nickel",
					"ohm", "orchard", "pepper", "quartz", "river", "solder", "spruce", "summit", "tab",
					"thermal", "tulip", "volt", "walnut", "willow", "zinc"];
				const pick = () => words[randomInt(words.length)];
				console.log(`${pick()}-${pick()}-${pick()}-${pick()}-${randomInt(10, 100)}`);
			' >"$file"
		)
	fi
	tr -d '\n' <"$file"
}

print_demo_sign_ins() {
	local password="$1" who
	printf '\nDemo sign-ins (password for all: %s):\n' "$password"
	for who in owner builder technician viewer; do
		printf '  %-28s %s\n' "$who@larkfield.test" "$password"
	done
}
