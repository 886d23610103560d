import { mkdir, readdir, rename, rm, stat, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { and, eq } from 'drizzle-orm';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';

// serverEnv() caches on first use: the data folder must be set before anything asks for it.
const dataDir = vi.hoisted(() => {
	const dir = `${process.env.TMPDIR ?? '/tmp'}/cellsitter-attachments-${process.pid}-${Date.now()}`;
	process.env.CELLSITTER_DATA_DIR = dir;
	return dir;
});

import { ATTACHMENT_MAX_BYTES } from '$lib/attachments';
import { addAttachment, deleteAttachment, listAttachments, readAttachment } from '$lib/server/attachments';
import { contentDisposition, downloadName } from '$lib/server/attachments-http';
import { sanitiseFileName } from '$lib/server/attachments-sniff';
import { attachmentsDir } from '$lib/server/attachments-store';
import { THUMBNAIL_WIDTH } from '$lib/server/attachments-thumbnails';
import { findMember, type Member } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { attachments, cellSpecs, memberships, packs, users } from '$lib/server/db/schema';
import { newId } from '$lib/server/ids';
import type { Role } from '$lib/permissions';
import * as collection from '../../src/routes/(app)/w/[workshop=slug]/packs/[packId=id]/attachments/+server';
import * as single from '../../src/routes/(app)/w/[workshop=slug]/packs/[packId=id]/attachments/[attachmentId=id]/+server';
import * as thumb from '../../src/routes/(app)/w/[workshop=slug]/packs/[packId=id]/attachments/[attachmentId=id]/thumb/+server';
import { signUpOwner } from './helpers';

const storeDir = path.join(dataDir, 'attachments');

async function memberOf(userId: string, slug: string): Promise<Member> {
	const [user] = await db.select().from(users).where(eq(users.id, userId));
	const member = await findMember({ id: user.id, email: user.email, name: user.name }, slug);
	if (!member) throw new Error('not a member');
	return member;
}

/** A new user who joins the workshop with the role (set directly: invitations have their own tests). */
async function join(owner: Member, role: Role, label: string): Promise<Member> {
	const person = await signUpOwner(label);
	await db.insert(memberships).values({ workshopId: owner.workshop.id, userId: person.userId, role });
	return memberOf(person.userId, owner.workshop.slug);
}

async function makePack(owner: Member, packOwnerId: string | null = null): Promise<string> {
	const specId = newId();
	await db.insert(cellSpecs).values({
		id: specId,
		workshopId: owner.workshop.id,
		name: `Spec ${specId}`,
		chemistryId: 'nmc',
		capacityAh: 3,
		maxContinuousAmps: 10,
		maxChargeAmps: 3
	});
	const packId = newId();
	await db
		.insert(packs)
		.values({ id: packId, workshopId: owner.workshop.id, name: 'Kart 4S2P', cellSpecId: specId, series: 4, parallel: 2, packOwnerId });
	return packId;
}

const storedFiles = async () => (await readdir(storeDir).catch(() => [] as string[])).sort();
const rowsOf = (packId: string) => db.select().from(attachments).where(eq(attachments.packId, packId));

async function bytesOf(body: ReadableStream<Uint8Array>): Promise<Uint8Array> {
	return new Uint8Array(await new Response(body).arrayBuffer());
}

const image = (format: 'jpeg' | 'png') =>
	sharp({ create: { width: 800, height: 600, channels: 3, background: { r: 181, g: 98, b: 42 } } })
		.toFormat(format)
		.toBuffer()
		.then((b) => new Uint8Array(b));

/** A one-page PDF, valid enough for a reader to open. */
function minimalPdf(padTo?: number): Uint8Array {
	const head =
		'%PDF-1.4\n1 0 obj<</Type/Catalog/Pages 2 0 R>>endobj\n2 0 obj<</Type/Pages/Kids[3 0 R]/Count 1>>endobj\n' +
		'3 0 obj<</Type/Page/Parent 2 0 R/MediaBox[0 0 200 200]>>endobj\n';
	const tail = 'trailer<</Root 1 0 R/Size 4>>\n%%EOF\n';
	const bytes = new TextEncoder().encode(head + tail);
	if (!padTo) return bytes;
	// A PDF comment line between the objects and the trailer keeps the file a PDF at any size.
	const out = new Uint8Array(padTo).fill(0x20);
	const headBytes = new TextEncoder().encode(head + '%');
	const tailBytes = new TextEncoder().encode('\n' + tail);
	out.set(headBytes, 0);
	out.set(tailBytes, padTo - tailBytes.length);
	return out;
}

function windowsProgram(): Uint8Array {
	const bytes = new Uint8Array(1024);
	bytes.set([0x4d, 0x5a]); // "MZ"
	bytes[0x3c] = 0x80; // offset of the PE header
	bytes.set([0x50, 0x45, 0, 0], 0x80); // "PE\0\0"
	return bytes;
}

function linuxProgram(): Uint8Array {
	const bytes = new Uint8Array(256);
	bytes.set([0x7f, 0x45, 0x4c, 0x46, 2, 1, 1, 0]); // "\x7fELF", 64-bit, little-endian
	return bytes;
}

let owner: Member;
let jpeg: Uint8Array;
let png: Uint8Array;

beforeAll(async () => {
	const o = await signUpOwner('attach');
	owner = await memberOf(o.userId, o.workshopSlug);
	[jpeg, png] = await Promise.all([image('jpeg'), image('png')]);
});

afterAll(async () => {
	await rm(dataDir, { recursive: true, force: true });
});

describe('adding attachments', () => {
	it('stores JPEG and PNG photos with thumbnails under random names, and reads them back unchanged', async () => {
		const packId = await makePack(owner);
		const a = await addAttachment(owner, packId, { name: 'busbar weld.jpg', bytes: jpeg });
		const b = await addAttachment(owner, packId, { name: 'layout.png', bytes: png });
		if (!a.ok || !b.ok) throw new Error('refused');
		expect(a.attachment).toMatchObject({ fileName: 'busbar weld.jpg', contentType: 'image/jpeg', sizeBytes: jpeg.byteLength, hasThumbnail: true });
		expect(b.attachment).toMatchObject({ fileName: 'layout.png', contentType: 'image/png', hasThumbnail: true });

		const rows = await rowsOf(packId);
		expect(rows).toHaveLength(2);
		const files = await storedFiles();
		for (const row of rows) {
			expect(row.storedName).toMatch(/^[a-z2-7]{24}$/);
			expect(row.thumbnailName).toMatch(/^[a-z2-7]{24}$/);
			expect(files).toContain(row.storedName);
			expect(files).toContain(row.thumbnailName);
			expect((await stat(path.join(storeDir, row.storedName))).mode & 0o777).toBe(0o600);
		}
		expect(files.some((f) => f.includes('busbar') || f.includes('layout') || /\.(jpe?g|png)$/.test(f))).toBe(false);
		expect(attachmentsDir()).toBe(path.resolve(storeDir));

		const readJpeg = await readAttachment(owner, packId, a.attachment.id, 'file');
		expect(readJpeg).toMatchObject({ contentType: 'image/jpeg', fileName: 'busbar weld.jpg', size: jpeg.byteLength });
		expect(Buffer.from(await bytesOf(readJpeg.body)).equals(Buffer.from(jpeg))).toBe(true);
		const readPng = await readAttachment(owner, packId, b.attachment.id, 'file');
		expect(Buffer.from(await bytesOf(readPng.body)).equals(Buffer.from(png))).toBe(true);

		const preview = await readAttachment(owner, packId, a.attachment.id, 'thumb');
		expect(preview.contentType).toBe('image/webp');
		const meta = await sharp(await bytesOf(preview.body)).metadata();
		expect(meta).toMatchObject({ format: 'webp', width: THUMBNAIL_WIDTH, height: 240 });

		const listed = await listAttachments(owner, packId);
		expect(listed.map((x) => x.fileName)).toEqual(['busbar weld.jpg', 'layout.png']);
		expect(listed[0].uploadedBy?.id).toBe(owner.user.id);
	});

	it('stores a PDF without a thumbnail', async () => {
		const packId = await makePack(owner);
		const pdf = minimalPdf();
		const added = await addAttachment(owner, packId, { name: 'cell datasheet.pdf', bytes: pdf });
		if (!added.ok) throw new Error(added.message);
		expect(added.attachment).toMatchObject({ contentType: 'application/pdf', hasThumbnail: false });
		const [row] = await rowsOf(packId);
		expect(row.thumbnailName).toBeNull();
		const read = await readAttachment(owner, packId, row.id, 'file');
		expect(Buffer.from(await bytesOf(read.body)).equals(Buffer.from(pdf))).toBe(true);
		await expect(readAttachment(owner, packId, row.id, 'thumb')).rejects.toMatchObject({ status: 404 });
	});

	it('stores a HEIC photo, without a thumbnail when it cannot be decoded here', async () => {
		const packId = await makePack(owner);
		// An iPhone-style HEIC header ("ftyp" box, brand heic) over data no decoder can read.
		const heic = new Uint8Array(4096).fill(7);
		heic.set([0, 0, 0, 0x18, ...new TextEncoder().encode('ftypheic'), 0, 0, 0, 0, ...new TextEncoder().encode('mif1heic')]);
		const added = await addAttachment(owner, packId, { name: 'IMG_0042.HEIC', bytes: heic });
		expect(added).toMatchObject({ ok: true, attachment: { contentType: 'image/heic', hasThumbnail: false } });
		const [row] = await rowsOf(packId);
		const read = await readAttachment(owner, packId, row.id, 'file');
		expect(Buffer.from(await bytesOf(read.body)).equals(Buffer.from(heic))).toBe(true);
	});

	it('keeps a JPEG named .pdf as the JPEG it is, and offers it for download as one', async () => {
		const packId = await makePack(owner);
		const added = await addAttachment(owner, packId, { name: '../../scan.pdf', bytes: jpeg });
		if (!added.ok) throw new Error(added.message);
		expect(added.attachment).toMatchObject({ fileName: 'scan.pdf', contentType: 'image/jpeg', hasThumbnail: true });
		expect(downloadName('scan.pdf', 'image/jpeg')).toBe('scan.pdf.jpg');
	});

	it.each([
		['a Windows program', 'a Windows program', 'setup.jpg', windowsProgram()],
		['a Linux program', 'a Linux program', 'photo.jpg', linuxProgram()],
		['plain text', null, 'notes.pdf', new TextEncoder().encode('just some text, not a datasheet')]
	])('refuses %s under an accepted name, and writes nothing', async (_label, what, name, bytes) => {
		const packId = await makePack(owner);
		const before = await storedFiles();
		const result = await addAttachment(owner, packId, { name, bytes });
		expect(result).toEqual({
			ok: false,
			reason: 'unsupported-type',
			message: `${name} is not a photo or a PDF${what ? ` (it looks like ${what})` : ''}.`
		});
		expect(await rowsOf(packId)).toEqual([]);
		expect(await storedFiles()).toEqual(before);
	});

	it('refuses a file over 10 MB and an empty one, and takes exactly 10 MB', async () => {
		const packId = await makePack(owner);
		const before = await storedFiles();
		const big = minimalPdf(Math.round(14.2 * 1024 * 1024));
		expect(await addAttachment(owner, packId, { name: 'datasheet.pdf', bytes: big })).toEqual({
			ok: false,
			reason: 'too-large',
			message: 'datasheet.pdf is 14.2 MB; the limit is 10 MB.'
		});
		const justOver = await addAttachment(owner, packId, { name: 'a.pdf', bytes: minimalPdf(ATTACHMENT_MAX_BYTES + 1) });
		expect(justOver).toMatchObject({ ok: false, reason: 'too-large' });
		expect(await addAttachment(owner, packId, { name: 'empty.jpg', bytes: new Uint8Array(0) })).toMatchObject({
			ok: false,
			reason: 'empty'
		});
		expect(await rowsOf(packId)).toEqual([]);
		expect(await storedFiles()).toEqual(before);

		const atLimit = await addAttachment(owner, packId, { name: 'b.pdf', bytes: minimalPdf(ATTACHMENT_MAX_BYTES) });
		expect(atLimit).toMatchObject({ ok: true, attachment: { sizeBytes: ATTACHMENT_MAX_BYTES } });
	});

	it('removes the files it wrote when the row cannot be inserted', async () => {
		const packId = await makePack(owner);
		const before = await storedFiles();
		// A user id that no users row has: the insert fails on its foreign key after the files are written.
		const ghost: Member = { ...owner, user: { ...owner.user, id: newId() } };
		await expect(addAttachment(ghost, packId, { name: 'a.jpg', bytes: jpeg })).rejects.toThrow();
		expect(await rowsOf(packId)).toEqual([]);
		expect(await storedFiles()).toEqual(before);
	});

	it('adds no row when the file cannot be written', async () => {
		const packId = await makePack(owner);
		await mkdir(storeDir, { recursive: true });
		await rename(storeDir, `${storeDir}.aside`);
		// A plain file where the folder should be: neither mkdir nor the write can succeed.
		await writeFile(storeDir, 'not a folder');
		try {
			await expect(addAttachment(owner, packId, { name: 'a.jpg', bytes: jpeg })).rejects.toThrow();
			expect(await rowsOf(packId)).toEqual([]);
		} finally {
			await rm(storeDir, { force: true });
			await rename(`${storeDir}.aside`, storeDir);
		}
	});

	it('keeps file names for display only, without folders or control characters', () => {
		expect(sanitiseFileName('C:\\Users\\me\\pack.jpg')).toBe('pack.jpg');
		expect(sanitiseFileName('photo\u202egpj.exe')).toBe('photogpj.exe');
		expect(sanitiseFileName('..')).toBe('attachment');
		expect(sanitiseFileName(`${'x'.repeat(300)}.jpeg`)).toHaveLength(200);
		expect(sanitiseFileName(`${'x'.repeat(300)}.jpeg`).endsWith('.jpeg')).toBe(true);
		expect(contentDisposition('Zellen "größe".pdf')).toBe(
			`inline; filename="Zellen _gro_e_.pdf"; filename*=UTF-8''Zellen%20%22gr%C3%B6%C3%9Fe%22.pdf`
		);
	});
});

describe('who may see and add attachments', () => {
	it('lets a technician add and remove their own, but not remove the owner’s', async () => {
		const tech = await join(owner, 'technician', 'attach-tech');
		const packId = await makePack(owner);
		const mine = await addAttachment(tech, packId, { name: 'cell 7.jpg', bytes: jpeg });
		const ours = await addAttachment(owner, packId, { name: 'wiring.png', bytes: png });
		if (!mine.ok || !ours.ok) throw new Error('refused');
		expect(mine.attachment.canDelete).toBe(true);
		const seenByTech = await listAttachments(tech, packId);
		expect(seenByTech.find((x) => x.id === ours.attachment.id)?.canDelete).toBe(false);

		await expect(deleteAttachment(tech, packId, ours.attachment.id)).rejects.toMatchObject({ status: 403 });
		const [row] = await db.select().from(attachments).where(eq(attachments.id, mine.attachment.id));
		await deleteAttachment(tech, packId, mine.attachment.id);
		expect(await db.select().from(attachments).where(eq(attachments.id, mine.attachment.id))).toEqual([]);
		const files = await storedFiles();
		expect(files).not.toContain(row.storedName);
		expect(files).not.toContain(row.thumbnailName);
		await expect(readAttachment(owner, packId, mine.attachment.id, 'file')).rejects.toMatchObject({ status: 404 });
	});

	it('shows a viewer the attachments of their own pack, read-only, and nothing of other packs', async () => {
		const viewer = await join(owner, 'viewer', 'attach-viewer');
		const theirs = await makePack(owner, viewer.user.id);
		const notTheirs = await makePack(owner);
		const a = await addAttachment(owner, theirs, { name: 'their pack.jpg', bytes: jpeg });
		const b = await addAttachment(owner, notTheirs, { name: 'other pack.jpg', bytes: jpeg });
		if (!a.ok || !b.ok) throw new Error('refused');

		expect((await listAttachments(viewer, theirs)).map((x) => [x.id, x.canDelete])).toEqual([[a.attachment.id, false]]);
		const read = await readAttachment(viewer, theirs, a.attachment.id, 'file');
		expect(Buffer.from(await bytesOf(read.body)).equals(Buffer.from(jpeg))).toBe(true);
		await expect(addAttachment(viewer, theirs, { name: 'x.jpg', bytes: jpeg })).rejects.toMatchObject({ status: 403 });
		await expect(deleteAttachment(viewer, theirs, a.attachment.id)).rejects.toMatchObject({ status: 403 });

		await expect(listAttachments(viewer, notTheirs)).rejects.toMatchObject({ status: 404 });
		await expect(readAttachment(viewer, notTheirs, b.attachment.id, 'file')).rejects.toMatchObject({ status: 404 });
		await expect(readAttachment(viewer, notTheirs, b.attachment.id, 'thumb')).rejects.toMatchObject({ status: 404 });
		// A viewer may never attach: the role answers first, so this says nothing about the pack.
		await expect(addAttachment(viewer, notTheirs, { name: 'x.jpg', bytes: jpeg })).rejects.toMatchObject({ status: 403 });
		// An attachment id is only found through its own pack.
		await expect(readAttachment(viewer, theirs, b.attachment.id, 'file')).rejects.toMatchObject({ status: 404 });
		expect(await rowsOf(theirs)).toHaveLength(1);
	});

	it('answers 404 to a member of another workshop', async () => {
		const stranger = await signUpOwner('attach-stranger');
		const strangerMember = await memberOf(stranger.userId, stranger.workshopSlug);
		const packId = await makePack(owner);
		const added = await addAttachment(owner, packId, { name: 'a.jpg', bytes: jpeg });
		if (!added.ok) throw new Error('refused');
		await expect(listAttachments(strangerMember, packId)).rejects.toMatchObject({ status: 404 });
		await expect(readAttachment(strangerMember, packId, added.attachment.id, 'file')).rejects.toMatchObject({ status: 404 });
		await expect(addAttachment(strangerMember, packId, { name: 'b.jpg', bytes: jpeg })).rejects.toMatchObject({ status: 404 });
		await expect(deleteAttachment(strangerMember, packId, added.attachment.id)).rejects.toMatchObject({ status: 404 });
		expect(await rowsOf(packId)).toHaveLength(1);
	});
});

describe('the attachment endpoints', () => {
	const base = (m: Member, packId: string) => `http://127.0.0.1/w/${m.workshop.slug}/packs/${packId}/attachments`;

	function event(m: Member, packId: string, init: { method?: string; form?: FormData; attachmentId?: string; viewOf?: Member } = {}) {
		const url = new URL(init.attachmentId ? `${base(m, packId)}/${init.attachmentId}` : base(m, packId));
		const who = init.viewOf ?? m;
		return {
			locals: { user: who.user, session: null },
			params: { workshop: m.workshop.slug, packId, attachmentId: init.attachmentId ?? '' },
			url,
			request: new Request(url, { method: init.method ?? 'GET', body: init.form })
		} as never; // a partial RequestEvent: the handlers read only these fields
	}

	const formWith = (...files: [string, Uint8Array, string?][]) => {
		const form = new FormData();
		for (const [name, bytes, type] of files) form.append('file', new File([bytes as BlobPart], name, { type: type ?? 'image/jpeg' }));
		return form;
	};

	it('uploads several files, serves them with safe headers, and deletes', async () => {
		const packId = await makePack(owner);
		const posted = await collection.POST(
			event(owner, packId, { method: 'POST', form: formWith(['rig.jpg', jpeg], ['sheet.pdf', minimalPdf(), 'application/pdf']) })
		);
		expect(posted.status).toBe(201);
		const { attachments: added } = (await posted.json()) as { attachments: { id: string; contentType: string }[] };
		expect(added.map((x) => x.contentType)).toEqual(['image/jpeg', 'application/pdf']);

		const listed = await collection.GET(event(owner, packId));
		expect(((await listed.json()) as { attachments: unknown[] }).attachments).toHaveLength(2);

		const file = await single.GET(event(owner, packId, { attachmentId: added[0].id }));
		expect(file.status).toBe(200);
		expect(file.headers.get('content-type')).toBe('image/jpeg');
		expect(file.headers.get('x-content-type-options')).toBe('nosniff');
		expect(file.headers.get('content-disposition')).toBe(`inline; filename="rig.jpg"; filename*=UTF-8''rig.jpg`);
		expect(file.headers.get('cache-control')).toMatch(/^private, max-age=\d+$/);
		// Uploaded content never runs as a page of the app: sandboxed, not embeddable elsewhere.
		expect(file.headers.get('content-security-policy')).toMatch(/(^|;\s*)sandbox(;|$)/);
		expect(file.headers.get('content-security-policy')).toMatch(/default-src 'none'/);
		expect(file.headers.get('cross-origin-resource-policy')).toBe('same-origin');
		expect(Buffer.from(await file.arrayBuffer()).equals(Buffer.from(jpeg))).toBe(true);

		// A PDF can carry scripts and forms: it is a download, sandboxed as well.
		const pdf = await single.GET(event(owner, packId, { attachmentId: added[1].id }));
		expect(pdf.headers.get('content-type')).toBe('application/pdf');
		expect(pdf.headers.get('content-disposition')).toBe(`attachment; filename="sheet.pdf"; filename*=UTF-8''sheet.pdf`);
		expect(pdf.headers.get('content-security-policy')).toMatch(/(^|;\s*)sandbox(;|$)/);
		expect(pdf.headers.get('x-content-type-options')).toBe('nosniff');
		await pdf.body?.cancel();

		const preview = await thumb.GET(event(owner, packId, { attachmentId: added[0].id }));
		expect(preview.headers.get('content-type')).toBe('image/webp');
		await expect(thumb.GET(event(owner, packId, { attachmentId: added[1].id }))).rejects.toMatchObject({ status: 404 });

		const deleted = await single.DELETE(event(owner, packId, { method: 'DELETE', attachmentId: added[0].id }));
		expect(deleted.status).toBe(204);
		await expect(single.GET(event(owner, packId, { attachmentId: added[0].id }))).rejects.toMatchObject({ status: 404 });
	});

	it('refuses a program renamed to .jpg with 415 and a file over the limit with 413, storing nothing', async () => {
		const packId = await makePack(owner);
		const before = await storedFiles();
		const exe = await collection.POST(
			event(owner, packId, { method: 'POST', form: formWith(['setup.jpg', windowsProgram()], ['ok.jpg', jpeg]) })
		);
		expect(exe.status).toBe(415);
		expect(await exe.json()).toEqual({ message: 'setup.jpg is not a photo or a PDF (it looks like a Windows program).' });

		const big = await collection.POST(
			event(owner, packId, { method: 'POST', form: formWith(['datasheet.pdf', minimalPdf(Math.round(14.2 * 1024 * 1024)), 'application/pdf']) })
		);
		expect(big.status).toBe(413);
		expect(await big.json()).toEqual({ message: 'datasheet.pdf is 14.2 MB; the limit is 10 MB.' });

		const none = await collection.POST(event(owner, packId, { method: 'POST', form: new FormData() }));
		expect(none.status).toBe(400);

		expect(await rowsOf(packId)).toEqual([]);
		expect(await storedFiles()).toEqual(before);
	});

	it('checks the member on every handler', async () => {
		const tech = await join(owner, 'technician', 'attach-tech2');
		const viewer = await join(owner, 'viewer', 'attach-viewer2');
		const stranger = await signUpOwner('attach-stranger2');
		const strangerMember = await memberOf(stranger.userId, stranger.workshopSlug);
		const packId = await makePack(owner, viewer.user.id);
		const otherPack = await makePack(owner);

		const byTech = await collection.POST(event(tech, packId, { method: 'POST', form: formWith(['tech.jpg', jpeg]) }));
		expect(byTech.status).toBe(201);
		const [row] = await rowsOf(packId);
		expect(row.uploadedBy).toBe(tech.user.id);

		// The viewer owns packId: may read it, may not add (403); the other pack does not exist for them.
		expect((await single.GET(event(viewer, packId, { attachmentId: row.id }))).status).toBe(200);
		await expect(collection.POST(event(viewer, packId, { method: 'POST', form: formWith(['v.jpg', jpeg]) }))).rejects.toMatchObject({
			status: 403
		});
		await expect(single.DELETE(event(viewer, packId, { method: 'DELETE', attachmentId: row.id }))).rejects.toMatchObject({
			status: 403
		});
		await expect(collection.GET(event(viewer, otherPack))).rejects.toMatchObject({ status: 404 });
		// The endpoint asks the role itself, before any pack is looked up: 403 on any pack.
		await expect(collection.POST(event(viewer, otherPack, { method: 'POST', form: formWith(['v.jpg', jpeg]) }))).rejects.toMatchObject({
			status: 403
		});
		await expect(single.DELETE(event(viewer, otherPack, { method: 'DELETE', attachmentId: row.id }))).rejects.toMatchObject({
			status: 403,
			body: { message: 'A viewer cannot add or remove files in this workshop.' }
		});

		// Another workshop's owner, on this workshop's URL: not a member, so 404 before anything else.
		const asStranger = (init: Parameters<typeof event>[2]) => event(owner, packId, { ...init, viewOf: strangerMember });
		await expect(collection.GET(asStranger({}))).rejects.toMatchObject({ status: 404 });
		await expect(single.GET(asStranger({ attachmentId: row.id }))).rejects.toMatchObject({ status: 404 });
		await expect(thumb.GET(asStranger({ attachmentId: row.id }))).rejects.toMatchObject({ status: 404 });
		await expect(single.DELETE(asStranger({ method: 'DELETE', attachmentId: row.id }))).rejects.toMatchObject({ status: 404 });
		// …and on their own workshop's URL with this pack's id: still 404.
		await expect(collection.GET(event(strangerMember, packId))).rejects.toMatchObject({ status: 404 });
		await expect(single.GET(event(strangerMember, packId, { attachmentId: row.id }))).rejects.toMatchObject({ status: 404 });

		expect(await db.select().from(attachments).where(and(eq(attachments.packId, packId), eq(attachments.id, row.id)))).toHaveLength(1);
	});
});
