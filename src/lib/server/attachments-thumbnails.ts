/** Small previews of attached photos (sharp); PDFs and undecodable images have none. */
import sharp from 'sharp';
import type { AttachmentType } from '$lib/attachments';

export const THUMBNAIL_WIDTH = 320;
export const THUMBNAIL_TYPE = 'image/webp';

const imageTypes = new Set<AttachmentType>(['image/jpeg', 'image/png', 'image/webp', 'image/heic']);

/** A WebP preview, or null when the image cannot be decoded here (HEVC-coded HEIC, damage). */
export async function makeThumbnail(bytes: Uint8Array, type: AttachmentType): Promise<Buffer | null> {
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
