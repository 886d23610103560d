/** Exports: CSV files of readings, cells and alerts, and the owner's zip of the whole workshop. */
import { contentDisposition } from '../attachments-http';
import type { CsvFile } from './tables';

export { alertsCsv, packCellsCsv, sessionReadingsCsv, requireOwner, READING_COLUMNS, CELL_COLUMNS, ALERT_COLUMNS } from './tables';
export { workshopZip } from './zip';
export { isoInZone, toCsv, fileNamePart } from './csv';

const privateDownload = {
	'Cache-Control': 'private, no-store',
	'X-Content-Type-Options': 'nosniff'
};

/** A CSV download: UTF-8 with a byte-order mark (so spreadsheets read °C and names right), as an attachment. */
export function csvResponse(file: CsvFile): Response {
	return new Response(`\uFEFF${file.csv}`, {
		headers: {
			'Content-Type': 'text/csv; charset=utf-8; header=present',
			'Content-Disposition': contentDisposition(file.fileName, 'attachment'),
			...privateDownload
		}
	});
}

/** The zip, streamed as it is written (no length: it is not known until the end). */
export function zipResponse(zip: { fileName: string; body: ReadableStream<Uint8Array> }): Response {
	return new Response(zip.body, {
		headers: { 'Content-Type': 'application/zip', 'Content-Disposition': contentDisposition(zip.fileName, 'attachment'), ...privateDownload }
	});
}
