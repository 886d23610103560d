/**
 * QR labels for the bench: one for the pack and one per group, each holding an absolute link (from
 * publicOrigin, so a phone on the workshop's network can open it) to the pack's scan route
 * (`/w/…/packs/…/g` and `/g/N`), which sends the scanner to the running session's reading entry
 * for that group, or to the pack's page when no session runs.
 */
import { error } from '@sveltejs/kit';
import { and, desc, eq, inArray, sql } from 'drizzle-orm';
import QRCode from 'qrcode';
import type { Member } from './auth/permissions';
import { db } from './db';
import { chargeSessions } from './db/schema';
import { publicOrigin } from './env';
import { requirePack } from './packs';

export type PackLabel = {
	/** Group position 1..S; null for the pack's own label. */
	group: number | null;
	/** What the QR code holds: an absolute URL. */
	url: string;
	/** The same link for people: host and path, no scheme. */
	shortUrl: string;
	/** The QR code as an SVG document (a viewBox, no size: the page sizes it). */
	svg: string;
};

/** The scan route's path for the pack (group null) or one of its groups. */
export function scanPath(workshopSlug: string, packId: string, group: number | null): string {
	return `/w/${workshopSlug}/packs/${packId}/g${group === null ? '' : `/${group}`}`;
}

/** The pack's label and one per group, in group order; 404 when the member may not see the pack. */
export async function packLabels(member: Member, packId: string) {
	const pack = await requirePack(member, packId);
	const origin = publicOrigin();
	const host = new URL(origin).host;
	const groups = [null, ...Array.from({ length: pack.series }, (_, i) => i + 1)];
	const labels: PackLabel[] = await Promise.all(
		groups.map(async (group) => {
			const path = scanPath(member.workshop.slug, pack.id, group);
			const url = `${origin}${path}`;
			// Level M survives a scuff or a thumbprint on the label; a 2-module quiet zone is enough
			// beside the label's own white margin.
			const code = await QRCode.toString(url, { type: 'svg', errorCorrectionLevel: 'M', margin: 2 });
			// The page names the code (role img with the link); the drawing itself stays out of the way.
			const svg = code.replace('<svg ', '<svg aria-hidden="true" focusable="false" ');
			return { group, url, shortUrl: `${host}${path}`, svg };
		})
	);
	return { pack: { id: pack.id, name: pack.name, series: pack.series, parallel: pack.parallel }, labels };
}

/**
 * Where a scanned label leads: the run screen of the pack's running (else paused) session with
 * the entry for that group (or the whole pack) open, or the pack's page when none runs. 404 when
 * the member may not see the pack, or the pack has no such group.
 */
export async function scanTarget(member: Member, packId: string, group: number | null): Promise<string> {
	const pack = await requirePack(member, packId);
	if (group !== null && (group < 1 || group > pack.series)) {
		error(404, `This pack has no group ${group}: its groups are 1 to ${pack.series}.`);
	}
	const [live] = await db
		.select({ id: chargeSessions.id })
		.from(chargeSessions)
		.where(
			and(
				eq(chargeSessions.workshopId, member.workshop.id),
				eq(chargeSessions.packId, pack.id),
				inArray(chargeSessions.status, ['running', 'paused'])
			)
		)
		.orderBy(sql`${chargeSessions.status} = 'running' desc`, sql`${chargeSessions.startedAt} desc nulls last`, desc(chargeSessions.id))
		.limit(1);
	const base = `/w/${member.workshop.slug}`;
	if (!live) return `${base}/packs/${pack.id}`;
	const entry = group === null ? 'entry=pack' : `group=${group}`;
	return `${base}/sessions/${live.id}?${entry}#log-readings`;
}
