/**
 * Attachments as the browser sees them: the limits, the accepted types and the shape that the
 * server's attachment verbs return. Client-safe; the server side is src/lib/server/attachments*.ts.
 */

/** 10 MiB, the same bound as the attachments_size check in the schema. */
export const ATTACHMENT_MAX_BYTES = 10 * 1024 * 1024;

/** Stored content type → the words a screen uses for it. */
export const attachmentTypes = {
	'image/jpeg': 'JPEG photo',
	'image/png': 'PNG image',
	'image/webp': 'WebP image',
	'image/heic': 'HEIC photo',
	'application/pdf': 'PDF document'
} as const;
export type AttachmentType = keyof typeof attachmentTypes;

/** For a file input: the types above, plus image/* so a phone offers its camera. */
export const ATTACHMENT_ACCEPT = [...Object.keys(attachmentTypes), 'image/*', '.heic', '.heif'].join(',');

/** One attachment of a pack, as listed on the pack page (dates are strings once sent as JSON). */
export type AttachmentView = {
	id: string;
	fileName: string;
	contentType: AttachmentType;
	sizeBytes: number;
	hasThumbnail: boolean;
	uploadedBy: { id: string; name: string } | null;
	createdAt: Date | string;
	/** The asking member may delete it (owner and builder, or whoever uploaded it). */
	canDelete: boolean;
};

/** "14.2 MB", "340 KB", "812 bytes" — binary units, as the 10 MB limit is counted. */
export function formatBytes(bytes: number, round: 'nearest' | 'up' = 'nearest'): string {
	const fit = (value: number) => (round === 'up' ? Math.ceil(value * 10) / 10 : Math.round(value * 10) / 10);
	if (bytes >= 1024 * 1024) return `${fit(bytes / (1024 * 1024)).toFixed(1)} MB`;
	if (bytes >= 1024) return `${Math.max(1, Math.round(bytes / 1024))} KB`;
	return `${bytes} bytes`;
}

/** The message for a file over the limit; rounded up so it never reads as within the limit. */
export function tooLargeMessage(fileName: string, bytes: number): string {
	return `${fileName} is ${formatBytes(bytes, 'up')}; the limit is ${ATTACHMENT_MAX_BYTES / (1024 * 1024)} MB.`;
}
