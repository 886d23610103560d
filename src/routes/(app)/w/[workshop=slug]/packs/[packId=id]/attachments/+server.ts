import { json } from '@sveltejs/kit';
import { ATTACHMENT_MAX_BYTES, tooLargeMessage } from '$lib/attachments';
import type { AttachmentView } from '$lib/attachments';
import { addAttachment, listAttachments, requireAttachablePack } from '$lib/server/attachments';
import { inspectFile, sanitiseFileName, type FileRefusal, type FileUpload } from '$lib/server/attachments-sniff';
import { requireMemberWith } from '$lib/server/auth/permissions';
import type { RequestHandler } from './$types';

const statusFor: Record<FileRefusal['reason'], number> = { 'too-large': 413, 'unsupported-type': 415, empty: 400 };

function bodyStatus(e: unknown): number | undefined {
	const err = e as { status?: number; cause?: { status?: number } } | null;
	return err?.status ?? err?.cause?.status;
}

/** The pack's attachments. */
export const GET: RequestHandler = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	return json({ attachments: await listAttachments(member, params.packId) });
};

/**
 * Attaches the files of the multipart field `file` (one or several). Every file is checked before
 * any is stored, so a refusal leaves the pack as it was.
 */
export const POST: RequestHandler = async ({ locals, params, url, request }) => {
	// Who may attach is settled before the body is read: the role first (403), then the pack (404).
	const member = await requireMemberWith(locals, params, url, 'attachments.add');
	await requireAttachablePack(member, params.packId);

	let form: FormData;
	try {
		form = await request.formData();
	} catch (e) {
		if (bodyStatus(e) === 413) {
			return json(
				{ message: `The upload is larger than the server accepts at once. Each file may be up to ${ATTACHMENT_MAX_BYTES / (1024 * 1024)} MB; send large files one at a time.` },
				{ status: 413 }
			);
		}
		return json({ message: 'Send the files as a form upload, in a field named "file".' }, { status: 400 });
	}

	// A form with no file chosen still sends an empty, nameless part.
	const files = form.getAll('file').filter((f): f is File => typeof f !== 'string' && (f.size > 0 || f.name !== ''));
	if (files.length === 0) return json({ message: 'Choose a photo or a PDF to attach.' }, { status: 400 });

	const uploads: FileUpload[] = [];
	const refusals: FileRefusal[] = [];
	// One file at a time keeps at most one file's bytes being sniffed at once.
	for (const file of files) {
		if (file.size > ATTACHMENT_MAX_BYTES) {
			refusals.push({ ok: false, reason: 'too-large', message: tooLargeMessage(sanitiseFileName(file.name), file.size) });
			continue;
		}
		const upload = { name: file.name, bytes: new Uint8Array(await file.arrayBuffer()) };
		const inspected = await inspectFile(upload);
		if (inspected.ok) uploads.push(upload);
		else refusals.push(inspected);
	}
	if (refusals.length > 0) {
		const worst = (['too-large', 'unsupported-type', 'empty'] as const).find((r) => refusals.some((x) => x.reason === r))!;
		return json({ message: refusals.map((r) => r.message).join(' ') }, { status: statusFor[worst] });
	}

	const added: AttachmentView[] = [];
	for (const upload of uploads) {
		const result = await addAttachment(member, params.packId, upload);
		if (!result.ok) return json({ message: result.message }, { status: statusFor[result.reason] });
		added.push(result.attachment);
	}
	return json({ attachments: added }, { status: 201 });
};
