/** `npm run schema:scene`: regenerates tracer/scene/scene.schema.json from the zod schema (Node script). */
import { writeFileSync } from "node:fs";
import { fileURLToPath } from "node:url";
import { sceneJsonSchemaText } from "./json-schema";

const target = fileURLToPath(new URL("./scene.schema.json", import.meta.url));
writeFileSync(target, sceneJsonSchemaText());
console.log(`wrote ${target}`);
