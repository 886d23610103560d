/**
 * What an uploaded file is: its type read from the bytes (never from the name or the browser's
 * word for it), its size checked, and a name fit for display. No storage, no access checks.
 */
import { fileTypeFromBuffer } from 'file-type';
import { ATTACHMENT_MAX_BYTES, tooLargeMessage, type AttachmentType } from '$lib/attachments';

/** Sniffed mime type → the type stored. HEIF stills from phones are kept as HEIC. */
const acceptedTypes: Record<string, AttachmentType> = {
	'image/jpeg': 'image/jpeg',
	'image/png': 'image/png',
	'image/webp': 'image/webp',
	'image/heic': 'image/heic',
	'image/heif': 'image/heic',
	'application/pdf': 'application/pdf'
};

export type FileUpload = { name: string; bytes: Uint8Array };

export type FileRefusal = {
	ok: false;
	reason: 'too-large' | 'unsupported-type' | 'empty';
	message: string;
};

/** A name fit for display and for a download: no folders, control or direction characters. */
export function sanitiseFileName(name: string): string {
	const base = name.split(/[/\\]/).pop() ?? '';
	const clean = base
		.normalize('NFC')
		// Bidirectional overrides can make "gpj.exe" read as "exe.jpg".
		.replace(/[\u0000-\u001f\u007f-\u009f\u200e\u200f\u202a-\u202e\u2066-\u2069]/g, '')
		.replace(/\s+/g, ' ')
		.trim()
		.replace(/^\.+/, '');
	if (!clean) return 'attachment';
	if (clean.length <= 200) return clean;
	const dot = clean.lastIndexOf('.');
	const ext = dot > 0 && clean.length - dot <= 10 ? clean.slice(dot) : '';
	return clean.slice(0, 200 - ext.length) + ext;
}

/** What a refused file seems to be, in words, from the type file-type found (if any). */
function describe(found: { ext: string; mime: string } | undefined): string | null {
	if (!found) return null;
	const { ext, mime } = found;
	if (ext === 'exe' || mime === 'application/x-msdownload') return 'a Windows program';
	if (ext === 'elf' || mime === 'application/x-elf') return 'a Linux program';
	if (ext === 'macho' || mime === 'application/x-mach-binary') return 'a Mac program';
	if (['zip', 'rar', '7z', 'gz', 'tar', 'bz2', 'xz', 'zst'].includes(ext)) return 'an archive';
	if (['docx', 'doc', 'odt', 'rtf'].includes(ext)) return 'a word-processor document';
	if (['xlsx', 'xls', 'ods'].includes(ext)) return 'a spreadsheet';
	if (mime.startsWith('image/')) return `a ${ext.toUpperCase()} image, which Cellsitter does not keep`;
	if (mime.startsWith('video/')) return 'a video';
	if (mime.startsWith('audio/')) return 'a sound file';
	return `a .${ext} file`;
}

/** Checks size and sniffs the type from the content; reads nothing from the name. */
export async function inspectFile(
	file: FileUpload
): Promise<{ ok: true; contentType: AttachmentType } | FileRefusal> {
	const name = sanitiseFileName(file.name);
	if (file.bytes.byteLength === 0) {
		return { ok: false, reason: 'empty', message: `${name} is empty.` };
	}
	if (file.bytes.byteLength > ATTACHMENT_MAX_BYTES) {
		return { ok: false, reason: 'too-large', message: tooLargeMessage(name, file.bytes.byteLength) };
	}
	const found = await fileTypeFromBuffer(file.bytes);
	const contentType = found ? acceptedTypes[found.mime] : undefined;
	if (!contentType) {
		const what = describe(found);
		return {
			ok: false,
			reason: 'unsupported-type',
			message: `${name} is not a photo or a PDF${what ? ` (it looks like ${what})` : ''}.`
		};
	}
	return { ok: true, contentType };
}
