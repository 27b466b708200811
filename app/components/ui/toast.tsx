// Short-lived messages after an action ("Version 4 saved"). Any component can call `toast(...)`.
import { useEffect } from "react";
import { create } from "zustand";
import { cx } from "./cx";

type ToastTone = "info" | "ok" | "danger";
type ToastItem = { id: number; tone: ToastTone; message: string };

type ToastState = { items: ToastItem[]; push: (tone: ToastTone, message: string) => void; dismiss: (id: number) => void };

let nextId = 1;
export const useToasts = create<ToastState>((set) => ({
  items: [],
  push: (tone, message) => set((s) => ({ items: [...s.items.slice(-3), { id: nextId++, tone, message }] })),
  dismiss: (id) => set((s) => ({ items: s.items.filter((t) => t.id !== id) })),
}));

export function toast(message: string, tone: ToastTone = "info"): void {
  useToasts.getState().push(tone, message);
}

function ToastCard({ item }: { item: ToastItem }) {
  const dismiss = useToasts((s) => s.dismiss);
  useEffect(() => {
    const timer = setTimeout(() => dismiss(item.id), item.tone === "danger" ? 8000 : 4000);
    return () => clearTimeout(timer);
  }, [item, dismiss]);
  return (
    <div
      role={item.tone === "danger" ? "alert" : "status"}
      className={cx(
        "pointer-events-auto flex items-start gap-3 rounded border bg-panel px-3 py-2 text-sm shadow-lg",
        item.tone === "ok" && "border-ok/50",
        item.tone === "danger" && "border-danger/60",
        item.tone === "info" && "border-line",
      )}
    >
      <span className="flex-1">{item.message}</span>
      <button type="button" aria-label="Dismiss" className="text-ink-faint hover:text-ink" onClick={() => dismiss(item.id)}>
        ×
      </button>
    </div>
  );
}

export function Toaster() {
  const items = useToasts((s) => s.items);
  return (
    <div aria-live="polite" className="pointer-events-none fixed right-4 bottom-4 z-50 flex w-80 flex-col gap-2">
      {items.map((t) => (
        <ToastCard key={t.id} item={t} />
      ))}
    </div>
  );
}
