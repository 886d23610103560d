// The QR label sheet and the route a label holds: what the sheet loads, where a scan leads
// (the running session's entry for that group, or the pack), and who gets a 404.
import { eq } from 'drizzle-orm';
import jsQR from 'jsqr';
import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { load as labelsLoad } from '../../src/routes/(app)/w/[workshop=slug]/packs/[packId=id]/labels/+page.server';
import { load as scanLoad } from '../../src/routes/(app)/w/[workshop=slug]/packs/[packId=id]/g/[[group=num]]/+page.server';
import { db } from '$lib/server/db';
import { chargeSessions } from '$lib/server/db/schema';
import { packLabels } from '$lib/server/pack-labels';
import type { Member } from '$lib/server/auth/permissions';
import { addPack, joinAs, memberOf, packFixture, signUpOwner } from './helpers';
import { addSession } from './readings-fixture';

type LabelsEvent = Parameters<typeof labelsLoad>[0];
type ScanEvent = Parameters<typeof scanLoad>[0];

function event<E>(who: Member | null, path: string, params: Record<string, string>): E {
	const url = new URL(`http://127.0.0.1:3100${path}`);
	return { locals: { user: who?.user ?? null, session: null }, params, url } as unknown as E;
}

/** The sheet as `who` loads it (a refusal is thrown). */
async function sheet(who: Member, slug: string, packId: string) {
	const data = await labelsLoad(event<LabelsEvent>(who, `/w/${slug}/packs/${packId}/labels`, { workshop: slug, packId }));
	return data as Awaited<ReturnType<typeof packLabels>>;
}

/** Where the scan route sends `who`: { status, location } of the redirect or error it throws. */
async function scan(who: Member | null, slug: string, packId: string, group?: string) {
	const path = `/w/${slug}/packs/${packId}/g${group === undefined ? '' : `/${group}`}`;
	const params: Record<string, string> = { workshop: slug, packId };
	if (group !== undefined) params.group = group;
	try {
		await scanLoad(event<ScanEvent>(who, path, params));
	} catch (thrown) {
		return thrown as { status: number; location?: string; body?: { message: string } };
	}
	throw new Error('the scan route returned instead of redirecting');
}

/** The text a QR code's SVG holds, read back by an independent decoder (jsQR) from a rendering of it. */
async function decodeSvg(svg: string): Promise<string | null> {
	const { data, info } = await sharp(Buffer.from(svg), { density: 300 })
		.flatten({ background: '#ffffff' })
		.ensureAlpha()
		.raw()
		.toBuffer({ resolveWithObject: true });
	return jsQR(new Uint8ClampedArray(data.buffer, data.byteOffset, data.length), info.width, info.height)?.data ?? null;
}

describe('the QR label sheet', () => {
	it('has the pack label and one per group, each an absolute link from ORIGIN that its code holds', async () => {
		const { owner, pack } = await packFixture({ series: 5, parallel: 2 });
		const slug = owner.workshop.slug;
		const result = await sheet(owner, slug, pack.id);
		const origin = new URL(process.env.ORIGIN!).origin;

		expect(result.pack).toMatchObject({ id: pack.id, name: 'Test pack', series: 5, parallel: 2 });
		expect(result.labels.map((l) => l.group)).toEqual([null, 1, 2, 3, 4, 5]);
		for (const label of result.labels) {
			const path = `/w/${slug}/packs/${pack.id}/g${label.group === null ? '' : `/${label.group}`}`;
			expect(label.url).toBe(`${origin}${path}`);
			expect(label.shortUrl).toBe(`${new URL(origin).host}${path}`);
			expect(await decodeSvg(label.svg)).toBe(label.url);
		}
	});

	it('is a 404 for a member of another workshop, and for a viewer whose pack it is not', async () => {
		const { owner, pack } = await packFixture({ series: 3, parallel: 1 });
		const stranger = await signUpOwner('stranger');
		const outsider = await memberOf(stranger.userId, stranger.workshopSlug);
		// The stranger asks with their own workshop in the URL, and with the pack's.
		await expect(sheet(outsider, outsider.workshop.slug, pack.id)).rejects.toMatchObject({ status: 404 });
		await expect(sheet(outsider, owner.workshop.slug, pack.id)).rejects.toMatchObject({ status: 404 });
		const viewer = await joinAs(owner, 'viewer');
		await expect(sheet(viewer, owner.workshop.slug, pack.id)).rejects.toMatchObject({ status: 404 });
	});
});

describe('a scanned label', () => {
	it('leads to the pack page while no session runs, then to the running session’s entry for that group', async () => {
		const { owner, pack, spec } = await packFixture({ series: 4, parallel: 1 });
		const slug = owner.workshop.slug;
		const packPage = `/w/${slug}/packs/${pack.id}`;

		// Planned and finished sessions are not where a reading goes.
		await addSession(owner, pack.id, 'planned');
		await addSession(owner, pack.id, 'done');
		expect(await scan(owner, slug, pack.id, '3')).toMatchObject({ status: 303, location: packPage });
		expect(await scan(owner, slug, pack.id)).toMatchObject({ status: 303, location: packPage });

		const paused = await addSession(owner, pack.id, 'paused');
		expect(await scan(owner, slug, pack.id, '3')).toMatchObject({
			location: `/w/${slug}/sessions/${paused.id}?group=3#log-readings`
		});

		// A running session comes before a paused one.
		const running = await addSession(owner, pack.id, 'running');
		expect(await scan(owner, slug, pack.id, '2')).toMatchObject({
			status: 303,
			location: `/w/${slug}/sessions/${running.id}?group=2#log-readings`
		});
		expect(await scan(owner, slug, pack.id)).toMatchObject({
			location: `/w/${slug}/sessions/${running.id}?entry=pack#log-readings`
		});

		// A session of another pack of the same workshop never catches this pack's label.
		await db.update(chargeSessions).set({ status: 'done' }).where(eq(chargeSessions.packId, pack.id));
		const sibling = await addPack(owner, { name: 'Sibling pack', cellSpecId: spec.id, series: 4, parallel: 1 });
		await addSession(owner, sibling.id, 'running');
		expect(await scan(owner, slug, pack.id, '2')).toMatchObject({ location: packPage });
	});

	it('sends a signed-out scanner to sign in and back to the label’s route', async () => {
		const { owner, pack } = await packFixture({ series: 4, parallel: 1 });
		const path = `/w/${owner.workshop.slug}/packs/${pack.id}/g/4`;
		expect(await scan(null, owner.workshop.slug, pack.id, '4')).toMatchObject({
			status: 303,
			location: `/login?next=${encodeURIComponent(path)}`
		});
	});

	it('is a 404 with a plain message for a group the pack does not have', async () => {
		const { owner, pack } = await packFixture({ series: 4, parallel: 1 });
		for (const group of ['5', '400']) {
			const answer = await scan(owner, owner.workshop.slug, pack.id, group);
			expect(answer.status).toBe(404);
			expect(answer.body?.message).toBe(`This pack has no group ${group}: its groups are 1 to 4.`);
		}
	});

	it('is a 404 for a member of another workshop, even while a session runs', async () => {
		const { owner, pack } = await packFixture({ series: 4, parallel: 1 });
		await addSession(owner, pack.id, 'running');
		const stranger = await signUpOwner('scanner');
		const outsider = await memberOf(stranger.userId, stranger.workshopSlug);
		expect(await scan(outsider, outsider.workshop.slug, pack.id, '1')).toMatchObject({ status: 404 });
		expect(await scan(outsider, owner.workshop.slug, pack.id, '1')).toMatchObject({ status: 404 });
		// The message never names the pack or its groups.
		expect((await scan(outsider, owner.workshop.slug, pack.id, '9'))?.body?.message).toBe('Not found');
	});
});
