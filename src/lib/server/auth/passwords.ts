import { hash, verify } from '@node-rs/argon2';

// argon2id at OWASP's minimum: 19 MiB, 2 passes, 1 lane.
const options = { memoryCost: 19456, timeCost: 2, parallelism: 1, outputLen: 32 } as const;

export function hashPassword(password: string): Promise<string> {
	return hash(password, options);
}

export async function verifyPassword(passwordHash: string, password: string): Promise<boolean> {
	try {
		return await verify(passwordHash, password);
	} catch {
		return false;
	}
}

// Verifying against this keeps the time of a sign-in for an unknown e-mail close to a real one.
let dummyHash: Promise<string> | undefined;
export async function burnPasswordCheck(password: string): Promise<void> {
	dummyHash ??= hashPassword('not-a-real-password-just-for-timing');
	await verifyPassword(await dummyHash, password);
}
