// Data for the HTTP benchmarks, in a throwaway database the built server has already migrated
// and filled with the demo workshop (CELLSITTER_DEMO=1): three running sessions on the demo pack
// with the most groups (one that takes the ingest, one with 1,000 readings, one with 100,000), a
// sign-in for the owner, and a device token issued through the app's own API.
//
// The sessions are copies of a session the demo planned through the app (its plan, limits and
// hands-on hours), so they have the shape the app writes; the readings are bulk-inserted, as a
// logger would have sent them over days. Load data only: no figure here is a check value.
import { newId, expectStatus, benchVolts } from './lib.mjs';

const OWNER_EMAIL = 'owner@larkfield.test';

/** A running copy of session `template` on pack `packId` (its plan, limits and people; no steps, no readings). */
export async function copySession(sql, template, packId, name) {
	const id = newId();
	await sql.begin(async (tx) => {
		await tx`create temporary table bench_session on commit drop as select * from charge_sessions where id = ${template}`;
		await tx`update bench_session set id = ${id}, pack_id = ${packId}, name = ${name}, status = 'running', stop_reason = '',
			started_at = now() - interval '4 days', ended_at = null, reading_due_at = null`;
		await tx`insert into charge_sessions select * from bench_session`;
	});
	return id;
}

/** Inserts `count` readings spread over the session's groups, one a minute per group, ending now. */
export async function fillReadings(sql, { sessionId, packId, groups, count, prefix }) {
	const perGroupMinutes = Math.ceil(count / groups.length);
	const end = Date.now() - 60_000;
	const chunk = 10_000;
	for (let from = 0; from < count; from += chunk) {
		const n = Math.min(chunk, count - from);
		const cols = { session_id: [], pack_id: [], group_id: [], taken_at: [], volts: [], amps: [], temp_c: [], client_id: [] };
		for (let k = 0; k < n; k++) {
			const i = from + k;
			const g = groups[i % groups.length];
			const minute = Math.floor(i / groups.length);
			cols.session_id.push(sessionId);
			cols.pack_id.push(packId);
			cols.group_id.push(g.id);
			cols.taken_at.push(new Date(end - (perGroupMinutes - minute) * 60_000).toISOString());
			cols.volts.push(benchVolts(g.index, minute));
			cols.amps.push(2);
			cols.temp_c.push(24 + (minute % 60) / 30);
			cols.client_id.push(`${prefix}-${i}`);
		}
		await sql`insert into readings (session_id, pack_id, group_id, taken_at, volts, amps, temp_c, source, client_id)
			select s, p, g, t, v, a, c, 'device', id from unnest(${cols.session_id}::text[], ${cols.pack_id}::text[], ${cols.group_id}::text[],
				${cols.taken_at}::timestamptz[], ${cols.volts}::float8[], ${cols.amps}::float8[], ${cols.temp_c}::float8[], ${cols.client_id}::text[])
				as r(s, p, g, t, v, a, c, id)`;
	}
}

/** A sign-in for user `userId`: a row in the session table lucia reads; returns the cookie (value = its id). */
export async function signIn(sql, userId) {
	const authId = newId() + newId();
	await sql`insert into auth_sessions (id, user_id, expires_at) values (${authId}, ${userId}, now() + interval '1 day')`;
	return `cellsitter_session=${authId}`;
}

/** A device token for the session, through the app's own endpoint (issued to a builder or owner). */
export async function deviceToken(baseUrl, slug, sessionId, cookie, name = 'Bench logger') {
	const response = await fetch(`${baseUrl}/api/w/${slug}/sessions/${sessionId}/tokens`, {
		method: 'POST',
		headers: { 'content-type': 'application/json', cookie, origin: baseUrl },
		body: JSON.stringify({ name })
	});
	await expectStatus(response, [201], 'issuing a device token');
	return (await response.json()).token;
}

/**
 * The demo's owner and workshop, its pack with the most groups and a session planned through the
 * app to copy (on that pack when there is one).
 */
export async function demoBasis(sql) {
	const [owner] = await sql`select u.id, u.email, w.id as workshop_id, w.slug from users u
		join memberships m on m.user_id = u.id and m.role = 'owner' join workshops w on w.id = m.workshop_id
		where u.email = ${OWNER_EMAIL}`;
	if (!owner) throw new Error(`No demo workshop: the server did not load the demo (${OWNER_EMAIL} is missing).`);
	const [pack] = await sql`select p.id, p.name, p.series, p.parallel from packs p where p.workshop_id = ${owner.workshop_id}
		order by p.series desc, p.name limit 1`;
	const groups = await sql`select id, index from pack_groups where pack_id = ${pack.id} order by index`;
	// The demo's own sessions only: the copies keep the planned session's created_at.
	const [template] = await sql`select id from charge_sessions where workshop_id = ${owner.workshop_id} and name not like 'Bench: %'
		order by (pack_id = ${pack.id}) desc, created_at limit 1`;
	if (!template) throw new Error('The demo has no charge session to copy: the bench needs one planned through the app.');
	return { owner, pack, groups, template };
}

export async function seed(sql, baseUrl) {
	const { owner, pack, groups, template } = await demoBasis(sql);

	const ingest = await copySession(sql, template.id, pack.id, 'Bench: ingest');
	const small = await copySession(sql, template.id, pack.id, 'Bench: 1,000 readings');
	const large = await copySession(sql, template.id, pack.id, 'Bench: 100,000 readings');
	await fillReadings(sql, { sessionId: small, packId: pack.id, groups, count: 1_000, prefix: 'small' });
	await fillReadings(sql, { sessionId: large, packId: pack.id, groups, count: 100_000, prefix: 'large' });
	await sql`analyze readings`;

	const cookie = await signIn(sql, owner.id);
	const token = await deviceToken(baseUrl, owner.slug, ingest, cookie);

	return {
		slug: owner.slug,
		pack: { id: pack.id, name: pack.name, series: pack.series, parallel: pack.parallel },
		groups: groups.map((g) => ({ id: g.id, index: g.index })),
		sessions: { ingest, small, large },
		cookie,
		token
	};
}
