// Small helpers shared by the HTTP and database benchmarks (plain Node, no app imports).
import { randomBytes } from 'node:crypto';

/** The value below which `q` (0..1) of the sorted numbers fall (nearest rank). */
export function quantile(sorted, q) {
	if (sorted.length === 0) return Number.NaN;
	const rank = Math.ceil(q * sorted.length) - 1;
	return sorted[Math.min(sorted.length - 1, Math.max(0, rank))];
}

/** Milliseconds since `start` (a process.hrtime.bigint()). */
export const msSince = (start) => Number(process.hrtime.bigint() - start) / 1e6;

/** A record id of the app's shape (src/lib/server/ids.ts: 120 random bits, base32 lower case). */
export function newId() {
	const alphabet = 'abcdefghijklmnopqrstuvwxyz234567';
	const bytes = randomBytes(15);
	let bits = 0;
	let value = 0;
	let out = '';
	for (const byte of bytes) {
		value = (value << 8) | byte;
		bits += 8;
		while (bits >= 5) {
			out += alphabet[(value >>> (bits - 5)) & 31];
			bits -= 5;
		}
	}
	return out;
}

/** Runs `task(i)` for i = 0..count−1 with at most `parallel` at a time. */
export async function pool(count, parallel, task) {
	let next = 0;
	const worker = async () => {
		while (next < count) {
			const i = next++;
			await task(i);
		}
	};
	await Promise.all(Array.from({ length: Math.min(parallel, count) }, worker));
}

/** Throws with the answer's text unless the status is one of `ok`. */
export async function expectStatus(response, ok, what) {
	if (!ok.includes(response.status)) {
		throw new Error(`${what}: HTTP ${response.status} ${(await response.text()).slice(0, 400)}`);
	}
	return response;
}

/**
 * Per-cell volts of a group on charge at minute `m` of a 4-hour CC/CV-like rise, with a little
 * noise: plausible numbers inside every default limit, for load only (never a check value).
 */
export function benchVolts(groupIndex, m) {
	const t = (m % 240) / 240;
	return Math.round((3.6 + 0.5 * Math.min(1, t * 1.3) + 0.002 * Math.sin(groupIndex * 7 + m)) * 1000) / 1000;
}
