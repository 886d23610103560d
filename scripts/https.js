#!/usr/bin/env node
// The built app over HTTPS, for phones on the workshop's network (docs/deploy.md).
//
//   node scripts/https.js                  serve <build>/handler.js over HTTPS
//   node scripts/https.js --certificate    only make (or renew) the certificate; print the CA's path
//   node scripts/https.js --origin         print the origin it would serve (see ORIGIN below)
//
// A service worker, the offline queue and push need a secure origin; a phone that opens the bench
// computer by its LAN address over plain HTTP has none. This makes a small certificate authority
// once (kept in <data>/tls, 10 years; its certificate is what a phone is told to trust) and a server
// certificate signed by it for localhost, 127.0.0.1, ::1, this machine's name and its LAN
// addresses. The server certificate is made again, by the same authority, when an address changes
// or it nears its end, so a phone that trusts the authority keeps trusting the server.
//
// Environment: HOST (default 127.0.0.1; HOST=0.0.0.0 is the explicit choice to answer on the LAN),
// PORT (default 3000), ORIGIN (default https://HOST:PORT, or https://<first LAN address>:PORT when
// listening on every address), CELLSITTER_DATA_DIR (default .data), CELLSITTER_TLS_DIR (default
// <data>/tls), CELLSITTER_HTTPS_NAMES (more DNS names or IP addresses, comma-separated),
// CELLSITTER_BUILD_DIR (default build), SHUTDOWN_TIMEOUT (seconds, default 30).
import fs from 'node:fs';
import https from 'node:https';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { X509Certificate } from 'node:crypto';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { generate } from 'selfsigned';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const DAY_MS = 86_400_000;
// Apple platforms refuse TLS server certificates valid for more than 825 days; browsers that
// enforce a public limit use 398. 397 days stays inside both.
const SERVER_DAYS = 397;
const CA_DAYS = 3650;
// A server certificate this close to its end is made again at the next start.
const RENEW_DAYS = 30;
/** Where the https wrapper hands out the authority's certificate (public: no key, no data). */
export const CA_DOWNLOAD_PATH = '/cellsitter-ca.crt';

/** IPv4 and IPv6 addresses of this machine's network interfaces, loopback and link-local left out. */
export function lanAddresses() {
	const found = [];
	for (const entries of Object.values(os.networkInterfaces())) {
		for (const entry of entries ?? []) {
			if (entry.internal) continue;
			// fe80:: addresses need a zone (%eth0) that no URL a phone types can carry.
			if (entry.family === 'IPv6' && entry.address.toLowerCase().startsWith('fe80')) continue;
			found.push(entry.address);
		}
	}
	return [...new Set(found)];
}

/** Every name and address the server certificate must cover, sorted (compared between runs). */
export function certificateNames(extra = []) {
	const host = os.hostname().toLowerCase();
	const names = ['localhost', '127.0.0.1', '::1', ...lanAddresses(), ...extra.map((n) => n.trim().toLowerCase()).filter(Boolean)];
	if (/^[a-z0-9-]+$/.test(host)) names.push(host, `${host}.local`);
	return [...new Set(names)].sort();
}

const altName = (name) => (net.isIP(name) ? { type: 7, ip: name } : { type: 2, value: name });

function writePrivate(file, text) {
	fs.writeFileSync(file, text, { mode: 0o600 });
	fs.chmodSync(file, 0o600);
}

function readIfThere(file) {
	try {
		return fs.readFileSync(file, 'utf8');
	} catch {
		return undefined;
	}
}

/**
 * The certificate authority and a server certificate for `names`, made when missing and reused
 * after: { caCert, caFile, cert, key, names, made: [] of 'authority' | 'server' }.
 */
export async function ensureCertificate({ dir, names, now = new Date() }) {
	fs.mkdirSync(dir, { recursive: true, mode: 0o700 });
	const files = {
		caCert: path.join(dir, 'cellsitter-ca.crt'),
		caKey: path.join(dir, 'cellsitter-ca.key'),
		cert: path.join(dir, 'server.crt'),
		key: path.join(dir, 'server.key'),
		names: path.join(dir, 'server-names.json')
	};
	const made = [];
	let caCert = readIfThere(files.caCert);
	let caKey = readIfThere(files.caKey);
	// An authority that would end before a new server certificate does is made again (phones must then trust the new one).
	const caEnding = caCert !== undefined && Date.parse(new X509Certificate(caCert).validTo) < now.getTime() + SERVER_DAYS * DAY_MS;
	if (!caCert || !caKey || caEnding) {
		const ca = await generate([{ name: 'commonName', value: `Cellsitter local authority (${os.hostname()})` }, { name: 'organizationName', value: 'Cellsitter on this computer' }], {
			keySize: 2048,
			algorithm: 'sha256',
			notBeforeDate: new Date(now.getTime() - DAY_MS),
			notAfterDate: new Date(now.getTime() + CA_DAYS * DAY_MS),
			extensions: [
				{ name: 'basicConstraints', cA: true, pathLenConstraint: 0, critical: true },
				{ name: 'keyUsage', keyCertSign: true, cRLSign: true, digitalSignature: true, critical: true }
			]
		});
		caCert = ca.cert;
		caKey = ca.private;
		writePrivate(files.caKey, caKey);
		fs.writeFileSync(files.caCert, caCert);
		made.push('authority');
	}

	let cert = readIfThere(files.cert);
	let key = readIfThere(files.key);
	const coveredBefore = JSON.parse(readIfThere(files.names) ?? '[]');
	const fresh =
		cert &&
		key &&
		made.length === 0 &&
		names.every((n) => coveredBefore.includes(n)) &&
		Date.parse(new X509Certificate(cert).validTo) > now.getTime() + RENEW_DAYS * DAY_MS &&
		new X509Certificate(cert).verify(new X509Certificate(caCert).publicKey);
	if (!fresh) {
		const all = [...new Set([...names, ...coveredBefore])].sort();
		const server = await generate([{ name: 'commonName', value: names.includes('localhost') ? 'localhost' : names[0] }], {
			keySize: 2048,
			algorithm: 'sha256',
			notBeforeDate: new Date(now.getTime() - DAY_MS),
			notAfterDate: new Date(now.getTime() + SERVER_DAYS * DAY_MS),
			ca: { key: caKey, cert: caCert },
			extensions: [
				{ name: 'basicConstraints', cA: false, critical: true },
				{ name: 'keyUsage', digitalSignature: true, keyEncipherment: true, critical: true },
				{ name: 'extKeyUsage', serverAuth: true },
				{ name: 'subjectAltName', altNames: all.map(altName) }
			]
		});
		cert = server.cert;
		key = server.private;
		writePrivate(files.key, key);
		fs.writeFileSync(files.cert, cert);
		fs.writeFileSync(files.names, JSON.stringify(all, null, '\t') + '\n');
		made.push('server');
		names = all;
	} else {
		names = coveredBefore;
	}
	return { caCert, caFile: files.caCert, cert, key, names, made };
}

const isLoopback = (host) => host === 'localhost' || host === '::1' || /^127\./.test(host);
const isAnyAddress = (host) => host === '0.0.0.0' || host === '::';
const urlHost = (host) => (net.isIPv6(host) ? `[${host}]` : host);

/** The origin people open: ORIGIN when set, else https://HOST:PORT or the first LAN address. */
export function httpsOrigin({ host, port, origin }) {
	if (origin) return new URL(origin).origin;
	const name = isAnyAddress(host) ? (lanAddresses().find((a) => net.isIPv4(a)) ?? '127.0.0.1') : host;
	return `https://${urlHost(name)}:${port}`;
}

function tlsDir() {
	const data = process.env.CELLSITTER_DATA_DIR || path.join(root, '.data');
	return process.env.CELLSITTER_TLS_DIR || path.join(data, 'tls');
}

async function certificateForThisMachine() {
	const extra = (process.env.CELLSITTER_HTTPS_NAMES ?? '').split(',');
	return ensureCertificate({ dir: tlsDir(), names: certificateNames(extra) });
}

function fail(message) {
	console.error(`scripts/https.js: ${message}`);
	process.exit(1);
}

async function serve() {
	const host = process.env.HOST || '127.0.0.1';
	const port = Number(process.env.PORT || 3000);
	if (!Number.isInteger(port) || port < 0 || port > 65535) fail(`PORT=${process.env.PORT} is not a port number.`);
	const origin = httpsOrigin({ host, port, origin: process.env.ORIGIN });
	if (!origin.startsWith('https://')) fail(`ORIGIN=${process.env.ORIGIN} must start with https:// when the app is served over HTTPS.`);
	// adapter-node reads ORIGIN when its handler is imported: set it first.
	process.env.ORIGIN = origin;
	process.env.HOST = host;
	process.env.PORT = String(port);

	const tls = await certificateForThisMachine();
	const buildDir = path.resolve(root, process.env.CELLSITTER_BUILD_DIR || 'build');
	const handlerFile = path.join(buildDir, 'handler.js');
	if (!fs.existsSync(handlerFile)) fail(`${handlerFile} is missing: build the app first (npm run build).`);
	const { handler } = await import(pathToFileURL(handlerFile).href);

	const server = https.createServer({ key: tls.key, cert: tls.cert }, (req, res) => {
		if (req.method === 'GET' && req.url === CA_DOWNLOAD_PATH) {
			res.writeHead(200, { 'content-type': 'application/x-x509-ca-cert', 'content-disposition': 'attachment; filename="cellsitter-ca.crt"', 'cache-control': 'no-store' });
			res.end(tls.caCert);
			return;
		}
		handler(req, res, () => {
			res.statusCode = 404;
			res.end('Not found');
		});
	});

	let stopping;
	const stop = (reason) => {
		if (stopping) return;
		// Keep-alive connections would hold close() open: drop the idle ones first (as adapter-node does).
		server.closeIdleConnections();
		server.close(() => {
			clearTimeout(stopping);
			process.emit('sveltekit:shutdown', reason);
		});
		stopping = setTimeout(() => server.closeAllConnections(), Number(process.env.SHUTDOWN_TIMEOUT || 30) * 1000);
	};
	process.on('SIGTERM', () => stop('SIGTERM'));
	process.on('SIGINT', () => stop('SIGINT'));
	server.on('request', (req) => {
		if (stopping) req.on('close', () => server.closeIdleConnections());
	});

	server.on('error', (error) => fail(error.code === 'EADDRINUSE' ? `${host}:${port} is already in use.` : error.message));
	server.listen(port, host, () => {
		const actual = server.address();
		console.log(`Listening on https://${urlHost(actual.address)}:${actual.port} (ORIGIN ${origin})`);
		console.log(`Certificate authority to trust on phones: ${tls.caFile} (also at ${origin}${CA_DOWNLOAD_PATH})`);
		console.log(`The certificate covers: ${tls.names.join(', ')}`);
	});
}

if (process.argv[1] && pathToFileURL(path.resolve(process.argv[1])).href === import.meta.url) {
	if (process.argv.includes('--origin')) {
		console.log(httpsOrigin({ host: process.env.HOST || '127.0.0.1', port: Number(process.env.PORT || 3000), origin: process.env.ORIGIN }));
	} else if (process.argv.includes('--certificate')) {
		const tls = await certificateForThisMachine();
		if (tls.made.length > 0) console.error(`Made: ${tls.made.join(' and ')} certificate (covers ${tls.names.join(', ')}).`);
		console.log(tls.caFile);
	} else {
		await serve();
	}
}
