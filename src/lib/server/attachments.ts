/**
 * Photos and datasheets on a pack: who may add, see and remove them. The verbs check that the
 * asking member may see the pack (404 otherwise) and may do the action (403); the bytes are
 * sniffed in attachments-sniff.ts, kept by attachments-store.ts, previewed by
 * attachments-thumbnails.ts and served by attachments-http.ts.
 */
import { error } from '@sveltejs/kit';
import { and, asc, eq } from 'drizzle-orm';
import type { AttachmentType, AttachmentView } from '$lib/attachments';
import { can } from '$lib/permissions';
import type { AttachmentContent } from './attachments-http';
import { inspectFile, sanitiseFileName, type FileRefusal, type FileUpload } from './attachments-sniff';
import { openStored, removeStored, writeStored } from './attachments-store';
import { makeThumbnail, THUMBNAIL_TYPE } from './attachments-thumbnails';
import { requirePermission, type Member } from './auth/permissions';
import { db } from './db';
import { attachments, users, type Attachment, type Pack } from './db/schema';
import { newId } from './ids';
import { requirePack } from './packs';

export type AddAttachmentResult = { ok: true; attachment: AttachmentView } | FileRefusal;

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
	requirePermission(member, 'attachments.add');
	return requirePack(member, packId);
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

	const storedName = newId();
	await writeStored(storedName, file.bytes);

	let thumbnailName: string | null = null;
	const thumbnail = await makeThumbnail(file.bytes, inspected.contentType);
	if (thumbnail) {
		try {
			thumbnailName = newId();
			await writeStored(thumbnailName, thumbnail);
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
	const { body, size } = await openStored(name);
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
