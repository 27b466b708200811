// Where to go after signing in. Only same-site paths are accepted, so a crafted link cannot bounce a person
// to another site right after they typed their password.
export function safeNext(value: unknown, fallback = "/projects"): string {
  if (typeof value !== "string") return fallback;
  if (!value.startsWith("/") || value.startsWith("//") || value.startsWith("/\\")) return fallback;
  if (/[\r\n]/.test(value)) return fallback;
  return value;
}
