// A simulated person for HTTP-level tests: keeps their session cookie between requests, posts forms the way a
// browser does, and comes from their own network address (X-Forwarded-For) so sign-in throttling of one test
// never touches another.
import { randomUUID } from "node:crypto";
import type { AppServer } from "./app-server";

export type Sent = { status: number; location: string | null; text: string; setCookie: string[] };

export class Person {
  cookie = "";
  /** Set for a pipeline caller: sent as the Authorization header on every request. */
  tokenHeader = "";
  readonly address: string;
  constructor(
    private readonly app: AppServer,
    address?: string,
  ) {
    this.address = address ?? `10.${rand()}.${rand()}.${rand()}`;
  }

  async send(path: string, init: { method?: string; form?: Record<string, string>; headers?: Record<string, string>; body?: BodyInit } = {}): Promise<Sent> {
    const headers: Record<string, string> = { "x-forwarded-for": this.address, "user-agent": "tracewell-tests", ...init.headers };
    if (this.cookie) headers.cookie = this.cookie;
    if (this.tokenHeader) headers.authorization = this.tokenHeader;
    let body = init.body;
    if (init.form) {
      body = new URLSearchParams(init.form).toString();
      headers["content-type"] = "application/x-www-form-urlencoded";
    }
    const res = await this.app.fetch(path, { method: init.method ?? (init.form ? "POST" : "GET"), headers, body });
    const setCookie = res.headers.getSetCookie();
    for (const c of setCookie) {
      const [pair] = c.split(";");
      const value = pair.slice(pair.indexOf("=") + 1);
      const expired = /expires=Thu, 01 Jan 1970/i.test(c) || /max-age=0/i.test(c) || value === "";
      this.cookie = expired ? "" : pair;
    }
    return { status: res.status, location: res.headers.get("location"), text: await res.text(), setCookie };
  }

  get(path: string, headers?: Record<string, string>) {
    return this.send(path, { headers });
  }

  post(path: string, form: Record<string, string>) {
    return this.send(path, { form });
  }

  async signUp(input: { name: string; email: string; password: string }): Promise<Sent> {
    return this.post("/signup", { ...input, next: "/projects" });
  }

  async signIn(email: string, password: string): Promise<Sent> {
    return this.post("/login", { email, password, next: "/projects" });
  }
}

function rand(): number {
  return 1 + Math.floor(Math.random() * 250);
}

export function uniqueEmail(label: string): string {
  return `${label}-${randomUUID().slice(0, 8)}@example.test`;
}

/** Decodes the few HTML entities React escapes in text, so page text can be matched against messages. */
export function pageText(html: string): string {
  return html.replace(/<!-- -->/g, "").replace(/&#x27;/g, "'").replace(/&quot;/g, '"').replace(/&amp;/g, "&").replace(/&lt;/g, "<").replace(/&gt;/g, ">");
}
