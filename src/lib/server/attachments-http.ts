/**
 * How an attachment goes out over HTTP. A file a member uploaded is untrusted content served from
 * our own origin, so the response may never run as a page of the app: the type is the one sniffed
 * at upload (nosniff), the content runs in a sandbox (CSP `sandbox`: no scripts, no same-origin
 * access, no forms), other sites may not embed it, and a PDF — a format that can carry scripts and
 * forms — is a download; photos are shown inline, sandboxed.
 */
import type { AttachmentType } from '$lib/attachments';

export type AttachmentContent = {
	body: ReadableStream<Uint8Array>;
	contentType: string;
	fileName: string;
	size: number;
};

const extensions: Record<string, string[]> = {
	'image/jpeg': ['.jpg', '.jpeg', '.jfif'],
	'image/png': ['.png'],
	'image/webp': ['.webp'],
	'image/heic': ['.heic', '.heif'],
	'application/pdf': ['.pdf']
};

/** Types a browser may show in its own tab (sandboxed); everything else is downloaded. */
const shownInline = new Set<AttachmentType | string>(['image/jpeg', 'image/png', 'image/webp', 'image/heic']);

/** The name a browser saves the file under: the shown name, with the real type's extension. */
export function downloadName(fileName: string, contentType: string): string {
	const fits = extensions[contentType];
	if (!fits || fits.some((ext) => fileName.toLowerCase().endsWith(ext))) return fileName;
	return fileName + fits[0];
}

/** RFC 6266: an ASCII fallback plus the exact name in RFC 5987 encoding. */
export function contentDisposition(fileName: string, disposition: 'inline' | 'attachment' = 'inline'): string {
	const ascii = fileName
		.normalize('NFKD')
		.replace(/[\u0300-\u036f]/g, '')
		.replace(/[^\x20-\x7e]|["\\%;]/g, '_');
	const exact = encodeURIComponent(fileName).replace(
		/['()*]/g,
		(c) => `%${c.charCodeAt(0).toString(16).toUpperCase()}`
	);
	return `${disposition}; filename="${ascii}"; filename*=UTF-8''${exact}`;
}

/** The response for a stored file or thumbnail; private because who may see a pack can change. */
export function attachmentResponse(content: AttachmentContent): Response {
	const disposition = shownInline.has(content.contentType) ? 'inline' : 'attachment';
	return new Response(content.body, {
		headers: {
			'Content-Type': content.contentType,
			'Content-Length': String(content.size),
			'Content-Disposition': contentDisposition(downloadName(content.fileName, content.contentType), disposition),
			'Content-Security-Policy': "sandbox; default-src 'none'; img-src 'self'; style-src 'unsafe-inline'",
			'X-Content-Type-Options': 'nosniff',
			'Cross-Origin-Resource-Policy': 'same-origin',
			'Cache-Control': 'private, max-age=3600'
		}
	});
}
