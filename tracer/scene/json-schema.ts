/**
 * The JSON Schema (draft 2020-12) of scene format 1, generated from the zod schema so the two can never
 * disagree. It describes the input form (fields with defaults are optional) and carries each field's
 * description for editor hover help. Cross-field rules (ids unique, materials exist, limits on products)
 * are only in validateScene.
 */
import { z } from "zod";
import { SceneSchema, SCENE_FORMAT } from "./schema";

export const SCENE_SCHEMA_ID = "https://tracewell.invalid/schemas/scene-1.json";

export function buildSceneJsonSchema(): Record<string, unknown> {
  const schema = z.toJSONSchema(SceneSchema, { io: "input", target: "draft-2020-12" }) as Record<string, unknown>;
  return { ...schema, $id: SCENE_SCHEMA_ID, title: `Tracewell scene (${SCENE_FORMAT})` };
}

/** Exactly the text committed as tracer/scene/scene.schema.json. */
export function sceneJsonSchemaText(): string {
  return JSON.stringify(buildSceneJsonSchema(), null, 2) + "\n";
}
