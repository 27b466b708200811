import { describe, expect, it } from "vitest";
import { EnvError, parseEnv } from "~/services/env.server";

const valid = {
  DATABASE_URL: "postgres://postgres@127.0.0.1:54329/tracewell",
  SESSION_SECRET: "0123456789abcdef0123",
  S3_ENDPOINT: "http://127.0.0.1:4569",
  S3_BUCKET: "tracewell",
  S3_ACCESS_KEY_ID: "key",
  S3_SECRET_ACCESS_KEY: "secret",
  SMTP_URL: "smtp://127.0.0.1:2525",
};

describe("configuration", () => {
  it("accepts a complete environment and fills defaults", () => {
    const env = parseEnv(valid);
    expect(env.S3_FORCE_PATH_STYLE).toBe(true);
    expect(env.APP_URL).toBe("http://localhost:3000");
  });

  it("names a missing variable", () => {
    const { DATABASE_URL: _omit, ...rest } = valid;
    expect(() => parseEnv(rest)).toThrow(EnvError);
    expect(() => parseEnv(rest)).toThrow(/DATABASE_URL: is not set/);
  });

  it("names a malformed variable and says what is expected", () => {
    expect(() => parseEnv({ ...valid, SMTP_URL: "mail.example" })).toThrow(/SMTP_URL: must be a URL like smtp:/);
    expect(() => parseEnv({ ...valid, SESSION_SECRET: "short" })).toThrow(/SESSION_SECRET: must be at least 16/);
    expect(() => parseEnv({ ...valid, S3_BUCKET: "ab" })).toThrow(/S3_BUCKET/);
  });
});
