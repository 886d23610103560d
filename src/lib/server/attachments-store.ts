/**
 * Where attachment bytes live: <data dir>/attachments/, one file per random id, private to the
 * server's user. Only stored names that are ids reach the file system. No access checks here:
 * the verbs in attachments.ts decide who may reach which file.
 */
import { mkdir, open, rm, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { Readable } from 'node:stream';
import { error } from '@sveltejs/kit';
import { serverEnv } from './env';

/** <data dir>/attachments, absolute. */
export function attachmentsDir(): string {
	return path.resolve(serverEnv().CELLSITTER_DATA_DIR, 'attachments');
}

function storedPath(name: string): string {
	// Stored names are always newId()s; anything else in a row must not reach the file system.
	if (!/^[a-z2-7]{24}$/.test(name)) error(404, 'Not found');
	return path.join(attachmentsDir(), name);
}

/** Writes a new file under `name`; never replaces one, and leaves nothing behind on failure. */
export async function writeStored(name: string, data: Uint8Array): Promise<void> {
	// Only the server reads these; the folder and files are private to its user.
	await mkdir(attachmentsDir(), { recursive: true, mode: 0o700 });
	const file = storedPath(name);
	try {
		await writeFile(file, data, { flag: 'wx', mode: 0o600 });
	} catch (e) {
		// EEXIST means the name is another file's: leave that one alone.
		if ((e as NodeJS.ErrnoException).code !== 'EEXIST') await rm(file, { force: true });
		throw e;
	}
}

/** Best effort: a file left behind is only disk space, so it never hides the error that matters. */
export async function removeStored(...names: (string | null)[]): Promise<void> {
	const results = await Promise.allSettled(
		names.filter((n): n is string => n !== null).map(async (n) => rm(storedPath(n), { force: true }))
	);
	for (const r of results) if (r.status === 'rejected') console.error('Could not remove an attachment file', r.reason);
}

/** A stored file as a stream with its size in bytes; 404 when it is gone. */
export async function openStored(name: string): Promise<{ body: ReadableStream<Uint8Array>; size: number }> {
	let handle;
	try {
		handle = await open(storedPath(name), 'r');
	} catch (e) {
		if ((e as NodeJS.ErrnoException).code === 'ENOENT') error(404, 'Not found');
		throw e;
	}
	const { size } = await handle.stat();
	const body = Readable.toWeb(handle.createReadStream()) as unknown as ReadableStream<Uint8Array>;
	return { body, size };
}
