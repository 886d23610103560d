/**
 * Photos and datasheets on a pack. The type is read from the bytes, never taken from the name;
 * files live under <data dir>/attachments/ with random names, and are served only through these
 * verbs, which check that the asking member may see the pack.
 */
import { open, mkdir, rm, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { Readable } from 'node:stream';
import { error } from '@sveltejs/kit';
import { and, asc, eq } from 'drizzle-orm';
import { fileTypeFromBuffer } from 'file-type';
import sharp from 'sharp';
import {
	ATTACHMENT_MAX_BYTES,
	attachmentTypes,
	tooLargeMessage,
	type AttachmentType,
	type AttachmentView
} from '$lib/attachments';
import { can } from '$lib/permissions';
import { requirePermission, type Member } from './auth/permissions';
import { db } from './db';
import { attachments, users, type Attachment, type Pack } from './db/schema';
import { serverEnv } from './env';
import { newId } from './ids';
import { requirePack } from './packs';

export { ATTACHMENT_MAX_BYTES, attachmentTypes };
export type { AttachmentType, AttachmentView };

/** Sniffed mime type → the type stored. HEIF stills from phones are kept as HEIC. */
const acceptedTypes: Record<string, AttachmentType> = {
	'image/jpeg': 'image/jpeg',
	'image/png': 'image/png',
	'image/webp': 'image/webp',
	'image/heic': 'image/heic',
	'image/heif': 'image/heic',
	'application/pdf': 'application/pdf'
};

const imageTypes = new Set<AttachmentType>(['image/jpeg', 'image/png', 'image/webp', 'image/heic']);

export const THUMBNAIL_WIDTH = 320;
const THUMBNAIL_TYPE = 'image/webp';

export type FileUpload = { name: string; bytes: Uint8Array };

export type FileRefusal = {
	ok: false;
	reason: 'too-large' | 'unsupported-type' | 'empty';
	message: string;
};

export type AddAttachmentResult = { ok: true; attachment: AttachmentView } | FileRefusal;

export type AttachmentContent = {
	body: ReadableStream<Uint8Array>;
	contentType: string;
	fileName: string;
	size: number;
};

/** <data dir>/attachments, absolute. */
export function attachmentsDir(): string {
	return path.resolve(serverEnv().CELLSITTER_DATA_DIR, 'attachments');
}

function storedPath(name: string): string {
	// Stored names are always newId()s; anything else in a row must not reach the file system.
	if (!/^[a-z2-7]{24}$/.test(name)) error(404, 'Not found');
	return path.join(attachmentsDir(), name);
}

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

/** A small WebP preview, or null when the image cannot be decoded here (HEVC-coded HEIC, damage). */
async function makeThumbnail(bytes: Uint8Array, type: AttachmentType): Promise<Buffer | null> {
	if (!imageTypes.has(type)) return null;
	try {
		return await sharp(bytes, { failOn: 'error' })
			.rotate()
			.resize({ width: THUMBNAIL_WIDTH, height: THUMBNAIL_WIDTH * 2, fit: 'inside', withoutEnlargement: true })
			.webp({ quality: 80 })
			.toBuffer();
	} catch {
		return null;
	}
}

async function writeNew(name: string, data: Uint8Array): Promise<void> {
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
async function removeStored(...names: (string | null)[]): Promise<void> {
	const results = await Promise.allSettled(
		names.filter((n): n is string => n !== null).map(async (n) => rm(storedPath(n), { force: true }))
	);
	for (const r of results) if (r.status === 'rejected') console.error('Could not remove an attachment file', r.reason);
}

function mayDelete(member: Member, row: Pick<Attachment, 'uploadedBy'>): boolean {
	if (can(member.role, 'packs.edit')) return true;
	return row.uploadedBy === member.user.id && can(member.role, 'attachments.add');
}

function toView(
	member: Member,
	row: Attachment,
	uploader: { id: string; name: string } | null
): AttachmentView {
	return {
		id: row.id,
		fileName: row.fileName,
		contentType: row.contentType as AttachmentType,
		sizeBytes: row.sizeBytes,
		hasThumbnail: row.thumbnailName !== null,
		uploadedBy: uploader,
		createdAt: row.createdAt,
		canDelete: mayDelete(member, row)
	};
}

/** The pack, when the member may see it (404 otherwise) and may attach files to it (403). */
export async function requireAttachablePack(member: Member, packId: string): Promise<Pack> {
	const pack = await requirePack(member, packId);
	requirePermission(member, 'attachments.add');
	return pack;
}

/** Stores one file on a pack: bytes first, then the row; a failure leaves neither behind. */
export async function addAttachment(
	member: Member,
	packId: string,
	file: FileUpload
): Promise<AddAttachmentResult> {
	const pack = await requireAttachablePack(member, packId);
	const inspected = await inspectFile(file);
	if (!inspected.ok) return inspected;

	// Only the server reads these; the folder and files are private to its user.
	await mkdir(attachmentsDir(), { recursive: true, mode: 0o700 });
	const storedName = newId();
	await writeNew(storedName, file.bytes);

	let thumbnailName: string | null = null;
	const thumbnail = await makeThumbnail(file.bytes, inspected.contentType);
	if (thumbnail) {
		try {
			thumbnailName = newId();
			await writeNew(thumbnailName, thumbnail);
		} catch {
			// A missing preview never costs the upload.
			thumbnailName = null;
		}
	}

	try {
		const [row] = await db
			.insert(attachments)
			.values({
				id: newId(),
				packId: pack.id,
				fileName: sanitiseFileName(file.name),
				contentType: inspected.contentType,
				sizeBytes: file.bytes.byteLength,
				storedName,
				thumbnailName,
				uploadedBy: member.user.id
			})
			.returning();
		return { ok: true, attachment: toView(member, row, { id: member.user.id, name: member.user.name }) };
	} catch (e) {
		await removeStored(storedName, thumbnailName);
		throw e;
	}
}

/** The pack's attachments, oldest first (the order a build was photographed in). */
export async function listAttachments(member: Member, packId: string): Promise<AttachmentView[]> {
	const pack = await requirePack(member, packId);
	const rows = await db
		.select({ attachment: attachments, uploaderId: users.id, uploaderName: users.name })
		.from(attachments)
		.leftJoin(users, eq(users.id, attachments.uploadedBy))
		.where(eq(attachments.packId, pack.id))
		.orderBy(asc(attachments.createdAt), asc(attachments.id));
	return rows.map((r) =>
		toView(member, r.attachment, r.uploaderId ? { id: r.uploaderId, name: r.uploaderName ?? '' } : null)
	);
}

async function findAttachment(member: Member, packId: string, attachmentId: string): Promise<Attachment> {
	const pack = await requirePack(member, packId);
	const [row] = await db
		.select()
		.from(attachments)
		.where(and(eq(attachments.id, attachmentId), eq(attachments.packId, pack.id)));
	if (!row) error(404, 'Not found');
	return row;
}

/** The file or its thumbnail as a stream; 404 when the pack is not visible or the file is gone. */
export async function readAttachment(
	member: Member,
	packId: string,
	attachmentId: string,
	variant: 'file' | 'thumb'
): Promise<AttachmentContent> {
	const row = await findAttachment(member, packId, attachmentId);
	const name = variant === 'file' ? row.storedName : row.thumbnailName;
	if (!name) error(404, 'Not found');

	let handle;
	try {
		handle = await open(storedPath(name), 'r');
	} catch (e) {
		if ((e as NodeJS.ErrnoException).code === 'ENOENT') error(404, 'Not found');
		throw e;
	}
	const { size } = await handle.stat();
	const body = Readable.toWeb(handle.createReadStream()) as unknown as ReadableStream<Uint8Array>;
	if (variant === 'file') return { body, contentType: row.contentType, fileName: row.fileName, size };
	const stem = row.fileName.replace(/\.[^.]*$/, '') || 'attachment';
	return { body, contentType: THUMBNAIL_TYPE, fileName: `${stem} (thumbnail).webp`, size };
}

/** Removes an attachment: owner and builder may remove any, others only what they attached. */
export async function deleteAttachment(member: Member, packId: string, attachmentId: string): Promise<void> {
	const row = await findAttachment(member, packId, attachmentId);
	if (!mayDelete(member, row)) {
		error(403, 'Only an owner, a builder or the person who attached it can remove this file.');
	}
	// Row first: once it is gone nothing serves the files, even if removing them fails.
	await db.delete(attachments).where(eq(attachments.id, row.id));
	await removeStored(row.storedName, row.thumbnailName);
}

const extensions: Record<string, string[]> = {
	'image/jpeg': ['.jpg', '.jpeg', '.jfif'],
	'image/png': ['.png'],
	'image/webp': ['.webp'],
	'image/heic': ['.heic', '.heif'],
	'application/pdf': ['.pdf']
};

/** The name a browser saves the file under: the shown name, with the real type's extension. */
export function downloadName(fileName: string, contentType: string): string {
	const fits = extensions[contentType];
	if (!fits || fits.some((ext) => fileName.toLowerCase().endsWith(ext))) return fileName;
	return fileName + fits[0];
}

/** RFC 6266: an ASCII fallback plus the exact name in RFC 5987 encoding. */
export function contentDisposition(fileName: string): string {
	const ascii = fileName
		.normalize('NFKD')
		.replace(/[\u0300-\u036f]/g, '')
		.replace(/[^\x20-\x7e]|["\\%;]/g, '_');
	const exact = encodeURIComponent(fileName).replace(
		/['()*]/g,
		(c) => `%${c.charCodeAt(0).toString(16).toUpperCase()}`
	);
	return `inline; filename="${ascii}"; filename*=UTF-8''${exact}`;
}

/** A response for readAttachment's result; private because who may see a pack can change. */
export function attachmentResponse(content: AttachmentContent): Response {
	return new Response(content.body, {
		headers: {
			'Content-Type': content.contentType,
			'Content-Length': String(content.size),
			'Content-Disposition': contentDisposition(downloadName(content.fileName, content.contentType)),
			'X-Content-Type-Options': 'nosniff',
			'Cache-Control': 'private, max-age=3600'
		}
	});
}
