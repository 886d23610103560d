/**
 * The owner's whole-workshop export: a zip of CSVs (archiver), streamed to the browser as it is
 * made. One entry is written at a time and the next waits until the zip has taken it, so memory
 * holds one CSV, however many sessions the workshop has (hence a query per entry, on purpose).
 */
import { Readable } from 'node:stream';
import { ZipArchive } from 'archiver';
import type { Member } from '../auth/permissions';
import { listBatch } from '../cells';
import { fileNamePart, toCsv } from './csv';
import { alertsCsv, CELL_COLUMNS, cellRows, readingsCsvFor, requireOwner, workshopTables } from './tables';

const README = `Cellsitter export of one workshop

Every file is UTF-8 CSV with a header row; units are in the column names (_V volts, _A amps,
_C degrees Celsius, _Ah ampere-hours, _mOhm milliohms, _h hours). Times are ISO 8601 with the
workshop's offset. Text that a spreadsheet could take for a formula starts with an apostrophe.

packs.csv      every pack
sessions.csv   every charge session (stop_reason says why one was stopped)
steps.csv      every step of every session's plan, planned and actual times
alerts.csv     the alert log with acknowledgements
audit.csv      who changed what, when (before and after as JSON)
voltage-checks.csv  the self-discharge check's re-measures at rest (a loose cell or a group)
cells/         one file per pack: its cells in label order
readings/      one file per session: its readings. volts_V is per cell for a group and the
               pack's for a whole-pack row; such a file uploads back into a session through
               "Upload a logger file" with the columns taken_at, group, volts_V, amps_A, temp_C,
               ambient_C and note.
`;

/** Resolves once the zip has taken the entry (false when the download was cancelled). */
function addEntry(archive: ZipArchive, name: string, text: string, date: Date): Promise<boolean> {
	return new Promise((resolve) => {
		const done = (ok: boolean) => {
			archive.off('entry', onEntry);
			archive.off('close', onClose);
			resolve(ok);
		};
		const onEntry = (entry: { name: string }) => entry.name === name && done(true);
		const onClose = () => done(false);
		archive.on('entry', onEntry);
		archive.once('close', onClose);
		archive.append(text, { name, date });
	});
}

/**
 * The zip of the member's workshop (owners only: 403 before anything is sent). The body is a web
 * ReadableStream the response sends as the zip is written.
 */
export async function workshopZip(member: Member, now = new Date()): Promise<{ fileName: string; body: ReadableStream<Uint8Array> }> {
	requireOwner(member);
	const tables = await workshopTables(member);
	const archive = new ZipArchive({ zlib: { level: 6 } });
	const taken = new Set<string>();
	const unique = (name: string) => {
		let candidate = name;
		for (let n = 2; taken.has(candidate); n++) candidate = name.replace(/\.csv$/, `-${n}.csv`);
		taken.add(candidate);
		return candidate;
	};

	const write = async () => {
		const fixed: [string, string][] = [
			['README.txt', README],
			['packs.csv', tables.packsCsv],
			['sessions.csv', tables.sessionsCsv],
			['steps.csv', tables.stepsCsv],
			['alerts.csv', (await alertsCsv(member)).csv],
			['audit.csv', tables.auditCsv],
			['voltage-checks.csv', tables.voltageChecksCsv]
		];
		for (const [name, text] of fixed) if (!(await addEntry(archive, unique(name), text, now))) return;
		for (const pack of tables.packs) {
			const batch = await listBatch(member, pack.id);
			const name = unique(`cells/${fileNamePart(pack.name)}.csv`);
			if (!(await addEntry(archive, name, toCsv(CELL_COLUMNS, cellRows(batch), member.workshop.timeZone), now))) return;
		}
		for (const session of tables.sessions) {
			const file = await readingsCsvFor(member, session);
			if (!(await addEntry(archive, unique(`readings/${file.fileName.replace(/^readings-/, '')}`), file.csv, now))) return;
		}
		await archive.finalize();
	};
	write().catch((err: unknown) => archive.destroy(err instanceof Error ? err : new Error(String(err))));

	return {
		fileName: `cellsitter-${fileNamePart(member.workshop.slug)}-${now.toISOString().slice(0, 10)}.zip`,
		body: Readable.toWeb(archive) as unknown as ReadableStream<Uint8Array>
	};
}
