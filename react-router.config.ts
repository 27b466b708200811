import type { Config } from "@react-router/dev/config";

// BUILD_DIR lets several test servers (one per contributor's port) build side by side without
// replacing each other's bundles; the default is React Router's usual ./build.
export default { ssr: true, appDirectory: "app", buildDirectory: process.env.BUILD_DIR || "build" } satisfies Config;
