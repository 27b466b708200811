/**
 * Writing the light balance back into the scene: each light of a balanced group has its radiance, power or
 * intensity multiplied by the group's gain × tint, so a fresh render of the edited scene matches what the
 * balanced preview showed (light transport is linear in each emitter's strength).
 */
import type { Scene } from "@tracer/scene/schema";
import { balanceFactor, isNeutral, type GroupBalance, type Rgb } from "./workspace-image";
import { setManyAtPaths, type PathSegment } from "./workspace-json";

export const ENVIRONMENT_GROUP = "environment";

/** Six significant digits: enough for light values, short enough to read in the JSON. */
export function tidy(x: number): number {
  return x === 0 ? 0 : Number(x.toPrecision(6));
}

function scaleRgb(v: readonly number[], f: Rgb): [number, number, number] {
  return [tidy(v[0]! * f[0]), tidy(v[1]! * f[1]), tidy(v[2]! * f[2])];
}

const isGrey = (f: Rgb) => Math.abs(f[0] - f[1]) < 1e-12 && Math.abs(f[1] - f[2]) < 1e-12;

export type WriteBack = { text: string; changes: { path: PathSegment[]; value: unknown }[]; notes: string[] };

/** Light groups of a scene in the order the app lists them: lights' groups by first use, then the environment. */
export function sceneGroups(scene: Scene): string[] {
  const seen: string[] = [];
  for (const l of scene.lights) if (!seen.includes(l.group)) seen.push(l.group);
  if (scene.environment) seen.push(ENVIRONMENT_GROUP);
  return seen;
}

export function writeBackBalance(text: string, scene: Scene, balances: Readonly<Record<string, GroupBalance>>): WriteBack {
  const changes: { path: PathSegment[]; value: unknown }[] = [];
  const notes: string[] = [];
  scene.lights.forEach((light, i) => {
    const b = balances[light.group];
    if (!b || isNeutral(b)) return;
    const f = balanceFactor(b);
    if (light.type === "point") {
      changes.push({ path: ["lights", i, "intensity"], value: scaleRgb(light.intensity, f) });
    } else if (light.radiance !== undefined) {
      changes.push({ path: ["lights", i, "radiance"], value: scaleRgb(light.radiance, f) });
    } else if (light.power !== undefined) {
      const p = light.power;
      const value = typeof p === "number" ? (isGrey(f) ? tidy(p * f[0]) : scaleRgb([p, p, p], f)) : scaleRgb(p, f);
      changes.push({ path: ["lights", i, "power"], value });
    }
  });
  const eb = balances[ENVIRONMENT_GROUP];
  const env = scene.environment;
  if (env && eb && !isNeutral(eb)) {
    const f = balanceFactor(eb);
    if (env.type === "uniform") changes.push({ path: ["environment", "radiance"], value: scaleRgb(env.radiance, f) });
    else if (env.type === "sky") {
      for (const k of ["zenith", "horizon", "ground"] as const) changes.push({ path: ["environment", k], value: scaleRgb(env[k], f) });
    } else {
      changes.push({ path: ["environment", "scale"], value: tidy(env.scale * eb.gain) });
      if (!isGrey(f)) notes.push("The environment map has one brightness scale, so only its gain was written back, not its tint.");
    }
  }
  return { text: changes.length ? setManyAtPaths(text, changes) : text, changes, notes };
}
