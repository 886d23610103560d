import { createServer } from 'node:net';
import postgres from 'postgres';
import { afterAll, describe, expect, it } from 'vitest';
import { isResetTokenUsable, requestPasswordReset, resetPassword, signInWithPassword } from '$lib/server/accounts';
import { RESETS_PER_ADDRESS, RESETS_PER_EMAIL } from '$lib/server/auth/reset-rate-limit';
import { createSession, validateSession } from '$lib/server/auth/session';
import { rereadServerEnv } from '$lib/server/env';
import { stopJobs, workQueueNow } from '$lib/server/jobs/registry';
import { actions } from '../../src/routes/(auth)/forgot/+page.server';
import { linkIn, mailTo, signUpOwner, uniqueEmail } from './helpers';

// global-setup.ts (or scripts/test.sh) sets it; links must come from here whatever a request says.
const ORIGIN = process.env.ORIGIN!;
const here = () => `192.0.2.${Math.floor(Math.random() * 250) + 1}-${crypto.randomUUID().slice(0, 6)}`;

afterAll(async () => {
	await stopJobs();
});

/** What the worker would do: run every queued reset mail now. */
const workResets = () => workQueueNow('password-reset-mail');

async function resetTokenFor(email: string, now?: Date) {
	expect(await requestPasswordReset(email, here(), now)).toEqual({ ok: true });
	await workResets();
	const [mail] = await mailTo(email);
	return linkIn(mail, '/reset/').split('/reset/')[1];
}

type Ev = Parameters<typeof actions.default>[0];

/** Posts the /forgot form as a browser would, with whatever Host the request claims. */
async function postForgot(email: string, address: string, host = '127.0.0.1:3100') {
	const headers: Record<string, string> = {};
	const url = new URL(`http://${host}/forgot`);
	const event = {
		url,
		request: new Request(url, {
			method: 'POST',
			body: new URLSearchParams({ email }),
			headers: { 'content-type': 'application/x-www-form-urlencoded', host }
		}),
		getClientAddress: () => address,
		setHeaders: (h: Record<string, string>) => Object.assign(headers, h),
		locals: { user: null, session: null }
	} as unknown as Ev;
	const result = (await actions.default(event)) as { status?: number; data?: { form?: { message?: string } } } | undefined;
	return { status: result?.status ?? 200, message: result?.data?.form?.message ?? '', headers };
}

/** The queued reset-mail jobs for these addresses, as pg-boss keeps them. */
async function queuedFor(emails: string[]) {
	const sql = postgres(process.env.DATABASE_URL!, { max: 1, onnotice: () => {} });
	try {
		return await sql<{ data: Record<string, unknown> }[]>`
			select data from pgboss.job
			where name = 'password-reset-mail' and data->>'email' in ${sql(emails)}
			order by data->>'email'`;
	} finally {
		await sql.end();
	}
}

describe('password reset', () => {
	it('sets a new password once and signs the account out everywhere', async () => {
		const owner = await signUpOwner('reset');
		const session = await createSession(owner.userId);
		const token = await resetTokenFor(owner.email);
		expect(await isResetTokenUsable(token)).toBe(true);

		expect(await resetPassword(token, 'a brand new password')).toMatchObject({ ok: true, userId: owner.userId });
		expect((await validateSession(session.id)).session).toBeNull();
		expect(await signInWithPassword(owner.email, 'a brand new password', here())).toMatchObject({ ok: true });
		expect(await signInWithPassword(owner.email, owner.password, here())).toMatchObject({ ok: false });

		// Single use.
		expect(await isResetTokenUsable(token)).toBe(false);
		expect(await resetPassword(token, 'yet another password')).toEqual({ ok: false, reason: 'invalid' });
	});

	it('expires an hour after it was asked for', async () => {
		const owner = await signUpOwner('late');
		const issued = new Date(Date.now() - 61 * 60_000);
		const token = await resetTokenFor(owner.email, issued);
		expect(await isResetTokenUsable(token)).toBe(false);
		expect(await resetPassword(token, 'too late password')).toEqual({ ok: false, reason: 'invalid' });
		expect(await signInWithPassword(owner.email, owner.password, here())).toMatchObject({ ok: true });
	});

	it('answers a known and an unknown address alike, with the same job queued, and mails only the known one', async () => {
		const owner = await signUpOwner('known');
		const unknown = uniqueEmail('nobody');
		const known = await postForgot(owner.email, here());
		const other = await postForgot(unknown, here());
		expect(known.status).toBe(200);
		expect(other.status).toBe(200);
		expect(known.message.replace(owner.email, 'X')).toBe(other.message.replace(unknown, 'X'));

		// The request path queues the same job, of the same shape, for both.
		const jobs = await queuedFor([owner.email, unknown]);
		expect(jobs).toHaveLength(2);
		const shape = (d: Record<string, unknown>) => Object.keys(d).sort();
		expect(shape(jobs[0].data)).toEqual(['email', 'origin', 'requestedAt']);
		expect(shape(jobs[1].data)).toEqual(shape(jobs[0].data));
		expect(jobs.map((j) => j.data.origin)).toEqual([ORIGIN, ORIGIN]);

		await workResets();
		expect(await mailTo(owner.email)).toHaveLength(1);
		expect(await mailTo(unknown)).toEqual([]);
	});

	it('never reads the accounts on the request path (it goes through with the users table locked)', async () => {
		const owner = await signUpOwner('locked');
		const sql = postgres(process.env.DATABASE_URL!, { max: 1, onnotice: () => {} });
		try {
			await sql.begin(async (tx) => {
				// Anything that reads `users` now waits until this transaction ends.
				await tx`lock table users in access exclusive mode`;
				const timeout = new Promise((_, reject) => setTimeout(() => reject(new Error('the request waited for the users table')), 5_000));
				for (const email of [owner.email, uniqueEmail('ghost')]) {
					expect(await Promise.race([requestPasswordReset(email, here()), timeout])).toEqual({ ok: true });
				}
			});
		} finally {
			await sql.end();
		}
		await workResets();
		expect(await mailTo(owner.email)).toHaveLength(1);
	});

	it(`sends at most ${RESETS_PER_EMAIL} mails for five requests in a row, then answers 429 with Retry-After`, async () => {
		const owner = await signUpOwner('flood');
		const address = here();
		const answers = [];
		for (let i = 0; i < 5; i++) answers.push(await postForgot(owner.email, address));
		expect(answers.map((a) => a.status)).toEqual([200, 200, 200, 429, 429]);
		expect(Number(answers[3].headers['Retry-After'])).toBeGreaterThan(0);
		expect(answers[3].message).toMatch(/^Too many reset requests/);
		// Another client address does not get past the mailbox's limit either.
		expect((await postForgot(owner.email, here())).status).toBe(429);

		await workResets();
		expect(await mailTo(owner.email)).toHaveLength(RESETS_PER_EMAIL);
	});

	it(`lets one client address ask for at most ${RESETS_PER_ADDRESS} resets an hour`, async () => {
		const address = here();
		for (let i = 0; i < RESETS_PER_ADDRESS; i++) {
			expect(await requestPasswordReset(uniqueEmail('sweep'), address)).toEqual({ ok: true });
		}
		const over = await requestPasswordReset(uniqueEmail('sweep'), address);
		expect(over).toMatchObject({ ok: false, reason: 'rate-limited' });
		expect(over.ok === false && over.reason === 'rate-limited' && over.retryAfterSeconds).toBeGreaterThan(0);
		await workResets();
	});

	it('mails a link to the configured origin, whatever Host the request claims', async () => {
		const owner = await signUpOwner('host');
		const answer = await postForgot(owner.email, here(), 'evil.example');
		expect(answer.status).toBe(200);
		await workResets();
		const [mail] = await mailTo(owner.email);
		const link = linkIn(mail, '/reset/');
		expect(new URL(link).origin).toBe(new URL(ORIGIN).origin);
		expect(mail.text).not.toContain('evil.example');
	});

	it('answers 503 in plain words, for every address alike, while the mail server is down', async () => {
		const owner = await signUpOwner('down');
		// A port nothing listens on: take a free one and let it go again.
		const closed = await new Promise<number>((resolve) => {
			const probe = createServer().listen(0, '127.0.0.1', () => {
				const { port } = probe.address() as { port: number };
				probe.close(() => resolve(port));
			});
		});
		const saved = process.env.SMTP_URL;
		process.env.SMTP_URL = `smtp://127.0.0.1:${closed}`;
		rereadServerEnv();
		try {
			const known = await postForgot(owner.email, here());
			const unknown = await postForgot(uniqueEmail('down'), here());
			expect(known.status).toBe(503);
			expect(unknown.status).toBe(503);
			expect(known.message).toBe(unknown.message);
			expect(known.message).toMatch(/cannot send e-mail just now/);
		} finally {
			process.env.SMTP_URL = saved;
			rereadServerEnv();
		}
		expect(await queuedFor([owner.email])).toEqual([]);
	});
});
