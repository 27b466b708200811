// The README is the product's front page: its sections appear once (an edit duplicated the
// Features and Performance sections twice before this check) and every command it tells a reader
// to run exists.
import { existsSync, readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";

const root = join(import.meta.dirname, "..", "..");
const readme = readFileSync(join(root, "README.md"), "utf8");

describe("README", () => {
  it("has each top-level section once", () => {
    const headings = readme.split("\n").filter((line) => line.startsWith("## "));
    expect(headings.length).toBeGreaterThan(5);
    expect(headings.filter((h, i) => headings.indexOf(h) !== i)).toEqual([]);
  });

  it("names only npm scripts and bin commands that exist", () => {
    const scripts = (JSON.parse(readFileSync(join(root, "package.json"), "utf8")) as { scripts: Record<string, string> }).scripts;
    const named = [...readme.matchAll(/npm run ([a-z][\w:-]*)/g)].map((m) => m[1]!);
    expect(named.length).toBeGreaterThan(2);
    for (const name of new Set(named)) expect(Object.keys(scripts), `npm run ${name}`).toContain(name);
    const bins = [...readme.matchAll(/`(bin\/[\w-]+)/g)].map((m) => m[1]!);
    expect(bins).toContain("bin/start");
    for (const bin of new Set(bins)) expect(existsSync(join(root, bin)), bin).toBe(true);
  });
});
