import { createContext, useContext } from "react";
import { useStore } from "zustand";
import type { WorkspaceState, WorkspaceStore } from "~/stores/workspace";

const WorkspaceContext = createContext<WorkspaceStore | null>(null);

export const WorkspaceProvider = WorkspaceContext.Provider;

export function useWorkspaceStore(): WorkspaceStore {
  const s = useContext(WorkspaceContext);
  if (!s) throw new Error("workspace components must sit inside <WorkspaceProvider>");
  return s;
}

export function useWorkspace<T>(selector: (s: WorkspaceState) => T): T {
  return useStore(useWorkspaceStore(), selector);
}
