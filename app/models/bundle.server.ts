// Scene bundles: one self-contained JSON file holding a version's scene and every asset it uses (base64),
// so a scene can move between projects or installations and render to the same accumulation hash there.
import { z } from "zod";
import { uniqueAssetRefs } from "@tracer/scene/assets";
import { validateScene, formatIssue } from "@tracer/scene/validate";
import { createScene, type CreateSceneResult } from "./scene.server";
import { getAsset, readAssetBytes, sha256Hex, uploadAsset, AssetError } from "./asset.server";

export const BUNDLE_FORMAT = "tracewell.bundle/1" as const;

export const BundleSchema = z.strictObject({
  format: z.literal(BUNDLE_FORMAT),
  name: z.string().min(1).max(200),
  version: z.strictObject({ number: z.number().int().min(1), message: z.string(), createdAt: z.string() }),
  exportedAt: z.string(),
  scene: z.record(z.string(), z.unknown()),
  assets: z
    .array(
      z.strictObject({
        ref: z.string().regex(/^sha256:[0-9a-f]{64}$/),
        name: z.string().min(1).max(200),
        kind: z.enum(["mesh", "envmap"]),
        base64: z.string(),
      }),
    )
    .max(1000),
});
export type Bundle = z.infer<typeof BundleSchema>;

export async function exportBundle(input: {
  projectId: string;
  sceneName: string;
  version: { number: number; message: string; createdAt: Date; scene: Record<string, unknown> };
}): Promise<Bundle> {
  const checked = validateScene(input.version.scene);
  if (!checked.ok) throw new AssetError("the version does not validate and cannot be bundled");
  const assets: Bundle["assets"] = [];
  for (const ref of uniqueAssetRefs(checked.scene)) {
    if (!ref.startsWith("sha256:")) throw new AssetError(`${ref}: only uploaded (sha256:) assets can be bundled`);
    const sha = ref.slice(7);
    const asset = await getAsset(input.projectId, sha);
    if (!asset) throw new AssetError(`${ref}: not an asset of this project`, 404);
    assets.push({ ref, name: asset.name, kind: asset.kind, base64: Buffer.from(await readAssetBytes(sha)).toString("base64") });
  }
  return {
    format: BUNDLE_FORMAT,
    name: input.sceneName,
    version: { number: input.version.number, message: input.version.message, createdAt: input.version.createdAt.toISOString() },
    exportedAt: new Date().toISOString(),
    scene: input.version.scene,
    assets,
  };
}

export type ImportResult = CreateSceneResult | { ok: false; reason: "bundle"; message: string };

/** Check everything before storing anything: the bundle's shape, every asset's hash and contents, the scene. */
export async function importBundle(input: { projectId: string; text: string; authorId: string | null; name?: string }): Promise<ImportResult> {
  let json: unknown;
  try {
    json = JSON.parse(input.text);
  } catch (e) {
    return { ok: false, reason: "bundle", message: `the file is not JSON: ${e instanceof Error ? e.message : String(e)}` };
  }
  const parsed = BundleSchema.safeParse(json);
  if (!parsed.success) {
    const i = parsed.error.issues[0]!;
    return { ok: false, reason: "bundle", message: `${i.path.join(".") || "bundle"}: ${i.message}` };
  }
  const bundle = parsed.data;
  const checked = validateScene(bundle.scene);
  if (!checked.ok) return { ok: false, reason: "bundle", message: `scene: ${checked.issues.map(formatIssue).join("; ")}` };
  const decoded: { name: string; bytes: Uint8Array }[] = [];
  for (const [i, a] of bundle.assets.entries()) {
    const bytes = new Uint8Array(Buffer.from(a.base64, "base64"));
    if (sha256Hex(bytes) !== a.ref.slice(7)) return { ok: false, reason: "bundle", message: `assets[${i}] (${a.name}): its bytes do not match ${a.ref}` };
    decoded.push({ name: a.name, bytes });
  }
  const included = new Set(bundle.assets.map((a) => a.ref));
  for (const ref of uniqueAssetRefs(checked.scene)) {
    if (!included.has(ref)) return { ok: false, reason: "bundle", message: `scene uses ${ref}, which the bundle does not include` };
  }
  for (const [i, a] of decoded.entries()) {
    try {
      await uploadAsset({ projectId: input.projectId, name: a.name, bytes: a.bytes, uploadedBy: input.authorId });
    } catch (e) {
      if (e instanceof AssetError) return { ok: false, reason: "bundle", message: `assets[${i}]: ${e.message}` };
      throw e;
    }
  }
  return createScene({
    projectId: input.projectId,
    name: input.name?.trim() || bundle.name,
    scene: bundle.scene,
    authorId: input.authorId,
    kind: "import",
    message: `Imported from a bundle of “${bundle.name}” v${bundle.version.number}`,
  });
}
