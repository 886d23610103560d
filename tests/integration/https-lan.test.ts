// scripts/https.js (HTTPS for phones on the workshop's network, docs/deploy.md), run as a real
// process on 127.0.0.1. The app's handler is a stand-in module here (a build takes longer than
// this whole suite may); scripts/bench.sh serves the real build through it and fetches `/`.
import { spawn, type ChildProcess } from 'node:child_process';
import { X509Certificate } from 'node:crypto';
import fs from 'node:fs';
import https from 'node:https';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

const script = path.resolve('scripts/https.js');
let dir: string;
const started: ChildProcess[] = [];

function freePort(): Promise<number> {
	return new Promise((resolve, reject) => {
		const probe = net.createServer();
		probe.once('error', reject);
		probe.listen(0, '127.0.0.1', () => {
			const { port } = probe.address() as net.AddressInfo;
			probe.close(() => resolve(port));
		});
	});
}

function run(env: Record<string, string>, args: string[] = []) {
	const child = spawn(process.execPath, [script, ...args], {
		env: { PATH: process.env.PATH ?? '', CELLSITTER_TLS_DIR: path.join(dir, 'tls'), CELLSITTER_BUILD_DIR: path.join(dir, 'build'), ...env },
		stdio: ['ignore', 'pipe', 'pipe']
	});
	started.push(child);
	let output = '';
	child.stdout!.on('data', (d) => (output += d));
	child.stderr!.on('data', (d) => (output += d));
	const exited = new Promise<number | null>((resolve) => child.on('exit', (code) => resolve(code)));
	const listening = new Promise<string>((resolve, reject) => {
		const check = () => {
			if (/Listening on/.test(output)) resolve(output);
		};
		child.stdout!.on('data', check);
		exited.then((code) => reject(new Error(`exited with ${code}: ${output}`)));
	});
	// Runs that are meant to exit never listen: nobody awaits this one then.
	listening.catch(() => {});
	return { child, exited, listening, output: () => output };
}

function get(url: string, ca?: string): Promise<{ status: number; body: string }> {
	return new Promise((resolve, reject) => {
		https
			.get(url, ca ? { ca } : {}, (res) => {
				let body = '';
				res.on('data', (d) => (body += d));
				res.on('end', () => resolve({ status: res.statusCode ?? 0, body }));
			})
			.on('error', reject);
	});
}

beforeAll(() => {
	dir = fs.mkdtempSync(path.join(os.tmpdir(), 'cellsitter-https-'));
	fs.mkdirSync(path.join(dir, 'build'));
	// adapter-node's handler.js exports `handler(req, res, next)`; this one reports what it was given.
	fs.writeFileSync(
		path.join(dir, 'build', 'handler.js'),
		"export const handler = (req, res) => { res.setHeader('content-type', 'application/json'); res.end(JSON.stringify({ url: req.url, origin: process.env.ORIGIN, encrypted: Boolean(req.socket.encrypted) })); };\n"
	);
});

afterAll(() => {
	for (const child of started) if (child.exitCode === null) child.kill('SIGTERM');
	fs.rmSync(dir, { recursive: true, force: true });
});

describe('HTTPS on the LAN (scripts/https.js)', () => {
	it('serves over TLS on 127.0.0.1 by default, trusted through the generated authority only', async () => {
		const port = await freePort();
		const server = run({ PORT: String(port) });
		const log = await server.listening;
		expect(log).toContain(`Listening on https://127.0.0.1:${port}`);

		const caFile = path.join(dir, 'tls', 'cellsitter-ca.crt');
		const ca = fs.readFileSync(caFile, 'utf8');
		const page = await get(`https://127.0.0.1:${port}/`, ca);
		expect(page.status).toBe(200);
		expect(JSON.parse(page.body)).toEqual({ url: '/', origin: `https://127.0.0.1:${port}`, encrypted: true });
		// The same name through DNS: localhost is in the certificate too.
		expect((await get(`https://localhost:${port}/`, ca)).status).toBe(200);

		// Without the authority the certificate is not trusted: it is the authority that makes it work.
		await expect(get(`https://127.0.0.1:${port}/`)).rejects.toThrow(/certificate|self.signed|verify/i);

		// The authority's certificate is handed out for phones, and it is the one on disk.
		const download = await get(`https://127.0.0.1:${port}/cellsitter-ca.crt`, ca);
		expect(download.body).toBe(ca);

		server.child.kill('SIGTERM');
		expect(await server.exited).toBe(0);
	});

	it('makes an authority and a server certificate fit for phones, and reuses them after', async () => {
		const caFile = path.join(dir, 'tls', 'cellsitter-ca.crt');
		const before = { ca: fs.readFileSync(caFile, 'utf8'), server: fs.readFileSync(path.join(dir, 'tls', 'server.crt'), 'utf8') };
		const again = run({}, ['--certificate']);
		expect(await again.exited).toBe(0);
		expect(again.output().trim()).toBe(caFile);
		expect(fs.readFileSync(caFile, 'utf8')).toBe(before.ca);
		expect(fs.readFileSync(path.join(dir, 'tls', 'server.crt'), 'utf8')).toBe(before.server);

		const ca = new X509Certificate(before.ca);
		const leaf = new X509Certificate(before.server);
		expect(ca.ca).toBe(true);
		expect(leaf.ca).toBe(false);
		expect(leaf.checkIssued(ca)).toBe(true);
		expect(leaf.verify(ca.publicKey)).toBe(true);
		expect(leaf.checkIP('127.0.0.1')).toBe('127.0.0.1');
		expect(leaf.checkHost('localhost')).toBe('localhost');
		// Every LAN address a phone could open (os.networkInterfaces, not loopback or link-local).
		for (const entries of Object.values(os.networkInterfaces())) {
			for (const e of entries ?? []) {
				if (!e.internal && e.family === 'IPv4') expect(leaf.checkIP(e.address)).toBe(e.address);
			}
		}
		// Apple platforms refuse server certificates valid for more than 825 days.
		const days = (Date.parse(leaf.validTo) - Date.parse(leaf.validFrom)) / 86_400_000;
		expect(days).toBeLessThanOrEqual(825);
		// Keys stay readable by their owner only.
		expect(fs.statSync(path.join(dir, 'tls', 'server.key')).mode & 0o077).toBe(0);
		expect(fs.statSync(path.join(dir, 'tls', 'cellsitter-ca.key')).mode & 0o077).toBe(0);
	});

	it('adds a new name with a new server certificate from the same authority', async () => {
		const caFile = path.join(dir, 'tls', 'cellsitter-ca.crt');
		const caBefore = fs.readFileSync(caFile, 'utf8');
		const again = run({ CELLSITTER_HTTPS_NAMES: 'bench.workshop.lan' }, ['--certificate']);
		expect(await again.exited).toBe(0);
		expect(fs.readFileSync(caFile, 'utf8')).toBe(caBefore);
		const leaf = new X509Certificate(fs.readFileSync(path.join(dir, 'tls', 'server.crt'), 'utf8'));
		expect(leaf.checkHost('bench.workshop.lan')).toBe('bench.workshop.lan');
		expect(leaf.checkIP('127.0.0.1')).toBe('127.0.0.1');
		expect(leaf.checkIssued(new X509Certificate(caBefore))).toBe(true);
	});

	it('refuses a plain-HTTP ORIGIN with a message, before listening', async () => {
		const port = await freePort();
		const server = run({ PORT: String(port), ORIGIN: `http://127.0.0.1:${port}` });
		expect(await server.exited).toBe(1);
		expect(server.output()).toMatch(/ORIGIN=http:\/\/127\.0\.0\.1:\d+ must start with https:\/\//);
	});
});
