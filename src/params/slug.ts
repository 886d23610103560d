import type { ParamMatcher } from '@sveltejs/kit';

/** A workshop's slug: lower-case letters, digits and inner hyphens, as the database allows. */
export const match: ParamMatcher = (param) => /^[a-z0-9](?:[a-z0-9-]{0,46}[a-z0-9])?$/.test(param);
