// Uploaded assets: broken files are refused with the line (OBJ) or byte (HDR) at fault, good files are
// stored once by SHA-256 (checked with node:crypto), and an asset a saved version uses cannot be deleted.
import { createHash } from "node:crypto";
import { readFileSync } from "node:fs";
import { afterAll, describe, expect, it } from "vitest";
import { AssetError, assetKey, deleteAsset, listAssets, loadAssetsForScene, MissingAssetsError, uploadAsset } from "~/models/asset.server";
import { createScene } from "~/models/scene.server";
import { dbPool } from "~/services/db.server";
import { ensureBucket, objectExists } from "~/services/storage.server";
import { kettleScene, makeProject, makeUser } from "../support/a3-fixtures";

afterAll(async () => {
  await dbPool().end();
});

const enc = (s: string) => new TextEncoder().encode(s);
const kettleObj = new Uint8Array(readFileSync("scenes/meshes/wren-kettle.obj"));
const lightboxHdr = new Uint8Array(readFileSync("scenes/maps/lightbox.hdr"));

async function setup() {
  await ensureBucket();
  const user = await makeUser("uploader");
  const project = await makeProject(user.id);
  return { user, project };
}

async function refusal(p: Promise<unknown>): Promise<string> {
  try {
    await p;
  } catch (e) {
    if (e instanceof AssetError) return e.message;
    throw e;
  }
  throw new Error("expected the upload to be refused");
}

describe("asset upload validation", () => {
  it("names the OBJ line with a face index out of range", async () => {
    const { user, project } = await setup();
    const obj = "# a triangle with a bad corner\nv 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 3\nf 1 2 9\n";
    expect(await refusal(uploadAsset({ projectId: project.id, name: "broken.obj", bytes: enc(obj), uploadedBy: user.id }))).toMatch(/^broken\.obj: line 6: .*9/);
  });

  it("names the OBJ line with an unreadable number", async () => {
    const { user, project } = await setup();
    const obj = "v 0 0 0\nv 1 zero 0\nv 0 1 0\nf 1 2 3\n";
    expect(await refusal(uploadAsset({ projectId: project.id, name: "typo.obj", bytes: enc(obj), uploadedBy: user.id }))).toMatch(/^typo\.obj: line 2:/);
  });

  it("names the byte of a truncated .hdr and of a file that is not Radiance at all", async () => {
    const { user, project } = await setup();
    const truncated = lightboxHdr.slice(0, lightboxHdr.length - 200);
    expect(await refusal(uploadAsset({ projectId: project.id, name: "cut.hdr", bytes: truncated, uploadedBy: user.id }))).toMatch(/^cut\.hdr: .*byte \d+/);
    expect(await refusal(uploadAsset({ projectId: project.id, name: "fake.hdr", bytes: enc("P6\n2 2\n255\n...."), uploadedBy: user.id }))).toMatch(/^fake\.hdr: .*byte 0/);
  });

  it("refuses other file types and empty files", async () => {
    const { user, project } = await setup();
    expect(await refusal(uploadAsset({ projectId: project.id, name: "kettle.fbx", bytes: enc("x"), uploadedBy: user.id }))).toMatch(/only Wavefront \.obj meshes and Radiance \.hdr maps/);
    expect(await refusal(uploadAsset({ projectId: project.id, name: "empty.obj", bytes: new Uint8Array(0), uploadedBy: user.id }))).toMatch(/empty/);
  });
});

describe("stored assets", () => {
  it("stores a mesh once by its SHA-256 with its facts, and a second upload returns the same entry", async () => {
    const { user, project } = await setup();
    const sha = createHash("sha256").update(kettleObj).digest("hex");
    const first = await uploadAsset({ projectId: project.id, name: "wren-kettle.obj", bytes: kettleObj, uploadedBy: user.id });
    expect(first.created).toBe(true);
    expect(first.asset.sha256).toBe(sha);
    expect(await objectExists(assetKey(sha))).toBe(true);
    expect(first.asset.facts.triangles).toBeGreaterThan(100);
    const again = await uploadAsset({ projectId: project.id, name: "copy.obj", bytes: kettleObj, uploadedBy: user.id });
    expect(again.created).toBe(false);
    expect((await listAssets(project.id)).length).toBe(1);
  });

  it("gives a map its size and a thumbnail; resolves a scene's refs to bytes; refuses deleting what a version uses", async () => {
    const { user, project } = await setup();
    const { asset } = await uploadAsset({ projectId: project.id, name: "lightbox.hdr", bytes: lightboxHdr, uploadedBy: user.id });
    expect(asset.facts).toMatchObject({ width: 128, height: 64 });
    expect(await objectExists(String(asset.facts.thumb))).toBe(true);

    const scene = { ...kettleScene(), environment: { type: "map", asset: `sha256:${asset.sha256}` } };
    const loaded = await loadAssetsForScene(project.id, scene);
    expect(loaded.get(`sha256:${asset.sha256}`)?.length).toBe(lightboxHdr.length);

    // Another project cannot resolve it by hash alone.
    const other = await makeProject(user.id);
    await expect(loadAssetsForScene(other.id, scene)).rejects.toBeInstanceOf(MissingAssetsError);

    const created = await createScene({ projectId: project.id, name: "Lightbox", scene, authorId: user.id });
    expect(created.ok).toBe(true);
    expect((await listAssets(project.id))[0]!.usedByVersions).toBe(1);
    expect(await refusal(deleteAsset(project.id, asset.sha256))).toMatch(/used by 1 saved version .*“Lightbox” v1.*cannot be deleted/);
  });

  it("deletes an unused asset and keeps the blob while another project lists it", async () => {
    const { user, project } = await setup();
    const other = await makeProject(user.id);
    const bytes = enc(`v 0 0 0\nv 1 0 0\nv 0 1 0\nf 1 2 3\n# ${Math.random()}\n`);
    const { asset } = await uploadAsset({ projectId: project.id, name: "tri.obj", bytes, uploadedBy: user.id });
    await uploadAsset({ projectId: other.id, name: "tri.obj", bytes, uploadedBy: user.id });
    await deleteAsset(project.id, asset.sha256);
    expect(await listAssets(project.id)).toHaveLength(0);
    expect(await objectExists(assetKey(asset.sha256))).toBe(true);
    await deleteAsset(other.id, asset.sha256);
    expect(await objectExists(assetKey(asset.sha256))).toBe(false);
  });
});
