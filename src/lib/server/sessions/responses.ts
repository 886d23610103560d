/** A sessions verb's failure as the JSON API answers it (the status the verb chose, a plain message). */
import { problem } from '../api';
import type { SessionFailure } from './results';

export function failureResponse(failure: SessionFailure): Response {
	return problem(failure.status, {
		message: failure.message,
		...(failure.reason ? { reason: failure.reason } : {}),
		...(failure.field ? { errors: [{ path: failure.field, message: failure.message }] } : {})
	});
}
