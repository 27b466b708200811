import { reactRouter } from "@react-router/dev/vite";
import tailwindcss from "@tailwindcss/vite";
import { defineConfig } from "vite";

export default defineConfig({
  plugins: [tailwindcss(), reactRouter()],
  resolve: { tsconfigPaths: true },
  server: { host: "127.0.0.1" },
  worker: { format: "es" },
  optimizeDeps: {
    include: [
      "@monaco-editor/react",
      "monaco-editor/editor",
      "monaco-editor/features/register.all",
      "monaco-editor/languages/features/json/register",
      "comlink",
      "zod",
      "zustand",
      "zustand/vanilla",
      "seedrandom",
      "gl-matrix",
    ],
  },
});
