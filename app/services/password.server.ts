// Password hashing with argon2id (memory-hard). Parameters are the commonly recommended minimum for
// interactive sign-in (19 MiB, 2 passes, 1 lane: common practice); they are stored inside each hash, so they
// can be raised later without breaking existing accounts.
import { hash, verify } from "@node-rs/argon2";

const ARGON2ID = 2;
const options = { algorithm: ARGON2ID, memoryCost: 19456, timeCost: 2, parallelism: 1 } as const;

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

// Verifying against this when the account does not exist keeps the response time similar either way,
// so timing does not tell whether an address has an account.
let decoy: Promise<string> | undefined;
export async function burnPasswordCheck(password: string): Promise<void> {
  decoy ??= hashPassword("decoy password that matches nothing");
  await verifyPassword(await decoy, password);
}
