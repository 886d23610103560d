// Local fakes of the hosted services Cellsitter talks to, in ONE process, on 127.0.0.1 only:
//
//   fake SMTP            FAKE_SMTP_PORT (default 2525): keeps every message in memory
//   fake push service    FAKE_PUSH_PORT (default 9443; in-process startFakes(): a free port):
//                        HTTPS with a self-signed certificate for IP 127.0.0.1, what web-push
//                        posts to (POST /push/:id, see push.js); decrypts and keeps every push
//   HTTP                 FAKE_HTTP_PORT (default 9410):
//     GET    /health              200
//     GET    /messages[?to=addr]  the kept messages, newest first
//     GET    /messages/:id        one message
//     DELETE /messages            forget them all
//     /oauth/…                    fake OAuth 2.0 provider (see oauth.js); client id and
//                                 secret from FAKE_OAUTH_CLIENT_ID / FAKE_OAUTH_CLIENT_SECRET
//     POST   /push/subscriptions  a test push subscription { endpoint, keys: { p256dh, auth } }
//     DELETE /push/subscriptions/:id   expire it (its endpoint then answers 410)
//     POST   /push/outage         { "seconds": n }: the push service answers 503 for n seconds
//     GET    /push/ca.pem         the push service's certificate, for the app to trust
//     GET    /pushes[?endpoint=]  the decrypted pushes, newest first
//     DELETE /pushes              forget them all
//
// Run it with `node tests/fakes/server.js`, or start it in-process with startFakes().
import http from 'node:http';
import { pathToFileURL } from 'node:url';
import { sendJson } from './http-util.js';
import { Mailbox } from './mailbox.js';
import { createOAuthProvider } from './oauth.js';
import { createPushService } from './push.js';
import { createSmtpServer } from './smtp.js';

const HOST = '127.0.0.1';

/**
 * @typedef {{
 *   smtpPort?: number,
 *   httpPort?: number,
 *   pushPort?: number,
 *   oauthClientId?: string,
 *   oauthClientSecret?: string,
 *   now?: () => number
 * }} FakesOptions
 * Ports default to 2525 / 9410; pass 0 to get free ports (read them from the result). The push
 * port defaults to a free one: subscriptions carry it in their endpoint, nobody needs it ahead.
 *
 * @typedef {{
 *   smtpPort: number,
 *   httpPort: number,
 *   httpUrl: string,
 *   smtpUrl: string,
 *   pushPort: number,
 *   pushUrl: string,
 *   pushCa: string,
 *   mailbox: Mailbox,
 *   push: import('./push.js').PushService,
 *   close: () => Promise<void>
 * }} RunningFakes
 */

/**
 * @param {Mailbox} mailbox
 * @param {ReturnType<typeof createOAuthProvider>} oauth
 * @param {import('./push.js').PushService} push
 */
function createHttpHandler(mailbox, oauth, push) {
	/** @type {(req: http.IncomingMessage, res: http.ServerResponse) => Promise<void>} */
	return async (req, res) => {
		const url = new URL(req.url ?? '/', `http://${HOST}`);
		if (url.pathname === '/health') return sendJson(res, 200, { ok: true });
		if (url.pathname === '/messages') {
			if (req.method === 'GET') return sendJson(res, 200, mailbox.list(url.searchParams.get('to')));
			if (req.method === 'DELETE') {
				mailbox.clear();
				return sendJson(res, 200, { ok: true });
			}
			return sendJson(res, 405, { error: 'use GET or DELETE' }, { allow: 'GET, DELETE' });
		}
		const one = /^\/messages\/([^/]+)$/.exec(url.pathname);
		if (one && req.method === 'GET') {
			const message = mailbox.get(decodeURIComponent(one[1] ?? ''));
			return message ? sendJson(res, 200, message) : sendJson(res, 404, { error: 'no such message' });
		}
		if (url.pathname.startsWith('/oauth/') && (await oauth.handle(req, res, url))) return;
		if (await push.handleHttp(req, res, url)) return;
		sendJson(res, 404, { error: 'not found' });
	};
}

/**
 * Listens on 127.0.0.1; rejects with a plain message when the port is taken.
 * @param {{ listen: (port: number, host: string, cb: () => void) => unknown, once: (event: 'error', cb: (e: Error) => void) => unknown }} server
 * @param {number} port
 * @param {string} what
 * @returns {Promise<void>}
 */
function listen(server, port, what) {
	return new Promise((resolve, reject) => {
		server.once('error', (/** @type {NodeJS.ErrnoException} */ error) => {
			reject(
				error.code === 'EADDRINUSE'
					? new Error(`${what}: port ${port} on ${HOST} is already in use (are the fakes already running?)`)
					: error
			);
		});
		server.listen(port, HOST, () => resolve());
	});
}

/** @param {import('node:net').Server} server */
function boundPort(server) {
	const address = server.address();
	return typeof address === 'object' && address ? address.port : 0;
}

/**
 * Starts every fake; close() stops them all.
 * @param {FakesOptions} [options]
 * @returns {Promise<RunningFakes>}
 */
export async function startFakes(options = {}) {
	const mailbox = new Mailbox();
	const oauth = createOAuthProvider({
		clientId: options.oauthClientId ?? 'cellsitter-local',
		clientSecret: options.oauthClientSecret ?? 'cellsitter-local-secret',
		now: options.now
	});
	/** @type {Array<() => Promise<void>>} */
	const closers = [];
	const close = async () => {
		await Promise.all(closers.map((c) => c()));
	};

	try {
		const smtp = createSmtpServer(mailbox);
		await listen(smtp, options.smtpPort ?? 2525, 'fake SMTP');
		closers.push(
			() =>
				new Promise((resolve) => {
					// smtp-server waits for open sessions; do not let a stuck client hold shutdown.
					const timer = setTimeout(resolve, 2000);
					smtp.close(() => {
						clearTimeout(timer);
						resolve();
					});
				})
		);

		const push = await createPushService({ now: options.now });
		await listen(push.server, options.pushPort ?? 0, 'fake push service');
		push.listening(boundPort(push.server));
		closers.push(
			() =>
				new Promise((resolve) => {
					push.server.close(() => resolve());
					push.server.closeAllConnections();
				})
		);

		const handler = createHttpHandler(mailbox, oauth, push);
		const httpServer = http.createServer((req, res) => {
			handler(req, res).catch((error) => {
				if (!res.headersSent) sendJson(res, 500, { error: String(error?.message ?? error) });
				else res.destroy();
			});
		});
		await listen(httpServer, options.httpPort ?? 9410, 'fakes HTTP');
		closers.push(
			() =>
				new Promise((resolve) => {
					httpServer.close(() => resolve());
					httpServer.closeAllConnections();
				})
		);

		const smtpPort = boundPort(smtp.server);
		const httpPort = boundPort(httpServer);
		const pushPort = boundPort(push.server);
		return {
			smtpPort,
			httpPort,
			smtpUrl: `smtp://${HOST}:${smtpPort}`,
			httpUrl: `http://${HOST}:${httpPort}`,
			pushPort,
			pushUrl: `https://${HOST}:${pushPort}`,
			pushCa: push.caPem,
			mailbox,
			push,
			close
		};
	} catch (error) {
		await close();
		throw error;
	}
}

/** @param {string | undefined} value @param {number} fallback */
function portFromEnv(value, fallback) {
	if (value === undefined || value === '') return fallback;
	const port = Number(value);
	if (!Number.isInteger(port) || port < 0 || port > 65535) throw new Error(`not a port number: ${value}`);
	return port;
}

async function main() {
	let fakes;
	try {
		fakes = await startFakes({
			smtpPort: portFromEnv(process.env.FAKE_SMTP_PORT, 2525),
			httpPort: portFromEnv(process.env.FAKE_HTTP_PORT, 9410),
			pushPort: portFromEnv(process.env.FAKE_PUSH_PORT, 9443),
			oauthClientId: process.env.FAKE_OAUTH_CLIENT_ID || undefined,
			oauthClientSecret: process.env.FAKE_OAUTH_CLIENT_SECRET || undefined
		});
	} catch (error) {
		console.error(`fakes: ${error instanceof Error ? error.message : error}`);
		process.exit(1);
	}
	const running = fakes;
	console.log(`fakes: SMTP on ${running.smtpUrl} (messages kept in memory)`);
	console.log(`fakes: HTTP on ${running.httpUrl} (/messages mailbox API, /oauth/ sign-in provider, /push/ and /pushes)`);
	console.log(`fakes: push service on ${running.pushUrl} (self-signed; certificate at ${running.httpUrl}/push/ca.pem)`);

	let stopping = false;
	const stop = () => {
		if (stopping) return;
		stopping = true;
		running.close().then(() => process.exit(0));
	};
	process.on('SIGTERM', stop);
	process.on('SIGINT', stop);
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
	await main();
}
