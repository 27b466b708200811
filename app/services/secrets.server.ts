// Random capability tokens (invitations, resets, API tokens) and their stored form. Only a SHA-256 of a
// token is kept: tokens carry 256 bits of randomness, so a fast hash is enough and lookups stay indexed.
import { createHash, randomBytes } from "node:crypto";

export function randomToken(bytes = 32): string {
  return randomBytes(bytes).toString("base64url");
}

export function hashToken(token: string): string {
  return createHash("sha256").update(token, "utf8").digest("hex");
}
