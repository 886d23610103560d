/** The audit page's query string: filters by person, pack, session and kind, and the page cursor. */
import { z } from 'zod';
import { auditKinds } from '../audit-words';

const ID = /^[a-z2-7]{24}$/;
const empty = (v: unknown) => (v === '' || v === null ? undefined : v);

export const AUDIT_PAGE_SIZE = 50;

export const auditQuerySchema = z.object({
	/** A person's user id, or "device" for readings' loggers. */
	person: z.preprocess(empty, z.union([z.literal('device'), z.string().regex(ID)], 'Choose a person from the list.').optional()),
	pack: z.preprocess(empty, z.string().regex(ID, 'Choose a pack from the list.').optional()),
	session: z.preprocess(empty, z.string().regex(ID, 'Choose a session from the list.').optional()),
	kind: z.preprocess(empty, z.enum(auditKinds as [string, ...string[]], 'Choose a kind of change from the list.').optional()),
	/** "<microseconds since 1970>.<event id>" of the last event shown: the next page starts after it. */
	before: z.preprocess(empty, z.string().regex(/^\d{1,17}\.\d{1,18}$/, 'The page link is not valid; start again from the newest.').optional())
});

export type AuditQuery = z.output<typeof auditQuerySchema>;
