import type { AuthSession, SessionUser } from '$lib/server/auth/session';

declare global {
	namespace App {
		interface Error {
			message: string;
			id?: string;
		}
		interface Locals {
			user: SessionUser | null;
			session: AuthSession | null;
		}
	}
}

export {};
