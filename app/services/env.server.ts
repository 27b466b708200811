// Configuration is parsed once, at start-up, so a missing or malformed variable is reported by name
// before any request is served. The rest of the server imports the typed `env`.
import { z } from "zod";

const url = (proto: RegExp, example: string) =>
  z.string().refine((v) => proto.test(v), { message: `must be a URL like ${example}` });

export const EnvSchema = z.object({
  NODE_ENV: z.enum(["development", "production", "test"]).default("development"),
  DATABASE_URL: url(/^postgres(ql)?:\/\//, "postgres://user@127.0.0.1:54329/tracewell"),
  SESSION_SECRET: z.string().min(16, "must be at least 16 characters"),
  APP_URL: url(/^https?:\/\//, "http://localhost:3000").default("http://localhost:3000"),
  S3_ENDPOINT: url(/^https?:\/\//, "http://127.0.0.1:4569"),
  S3_REGION: z.string().min(1).default("us-east-1"),
  S3_BUCKET: z.string().regex(/^[a-z0-9][a-z0-9.-]{2,62}$/, "must be a valid bucket name (3–63 lower-case characters)"),
  S3_ACCESS_KEY_ID: z.string().min(1),
  S3_SECRET_ACCESS_KEY: z.string().min(1),
  S3_FORCE_PATH_STYLE: z
    .enum(["true", "false"])
    .default("true")
    .transform((v) => v === "true"),
  SMTP_URL: url(/^smtps?:\/\//, "smtp://127.0.0.1:2525"),
  MAIL_FROM: z.string().min(3).default("Tracewell <no-reply@tracewell.local>"),
  // Set only when the local SMTP fake runs: the folder whose messages the development outbox page lists.
  MAIL_OUTBOX_DIR: z.string().optional(),
  // Cookies are Secure unless explicitly served over plain http (local development and tests).
  COOKIE_SECURE: z
    .enum(["true", "false"])
    .optional()
    .transform((v) => (v === undefined ? undefined : v === "true")),
});

export type Env = z.infer<typeof EnvSchema>;

export class EnvError extends Error {}

export function parseEnv(source: Record<string, string | undefined>): Env {
  const result = EnvSchema.safeParse(source);
  if (!result.success) {
    const lines = result.error.issues.map((i) => {
      const name = i.path.join(".");
      const missing = source[name] === undefined || source[name] === "";
      return `  ${name}: ${missing ? "is not set" : i.message}`;
    });
    throw new EnvError(`Tracewell configuration is invalid:\n${lines.join("\n")}`);
  }
  return result.data;
}

let cached: Env | undefined;
export function getEnv(): Env {
  cached ??= parseEnv(process.env);
  return cached;
}
