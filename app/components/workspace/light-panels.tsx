/**
 * Side panels for judging light: the per-group light balance, the look (exposure, tone map, false
 * colour with its legend, luminance histogram) and measuring (pixel probe and light meter).
 */
import { useEffect, useState } from "react";
import { Button, cx, toast } from "~/components/ui";
import {
  FALSE_COLOUR_BANDS,
  formatReadout,
  irradianceToLux,
  isNeutral,
  LUMINOUS_EFFICACY_LM_PER_W,
  NEUTRAL_BALANCE,
  type Histogram as HistogramData,
  type ProbeReading,
  type Rgb,
} from "~/lib/workspace-image";
import type { MeterReading, PreviewRenderer } from "~/lib/workspace-render";
import { useWorkspace, useWorkspaceStore } from "./context";
import { DisplayFields } from "./scene-forms";
import { usePreview, usePreviewContext } from "./preview";

// ---------------------------------------------------------------------------------------------
// light balance

const toHex = (rgb: Rgb) => {
  const m = Math.max(...rgb, 1e-9);
  return "#" + rgb.map((c) => Math.round((c / m) * 255).toString(16).padStart(2, "0")).join("");
};
const fromHex = (hex: string): Rgb => [parseInt(hex.slice(1, 3), 16) / 255, parseInt(hex.slice(3, 5), 16) / 255, parseInt(hex.slice(5, 7), 16) / 255];

/** Gains are set in stops (how lighting people talk about brightness changes) and applied as 2^stops. */
const stopsOf = (gain: number) => (gain > 0 ? Math.log2(gain) : -10);

export function LightBalancePanel() {
  const store = useWorkspaceStore();
  const groupNames = usePreview((s) => s.groupNames);
  const balances = useWorkspace((s) => s.balances);
  const canEdit = useWorkspace((s) => s.canEdit);
  const hasIssues = useWorkspace((s) => s.issues.length > 0);
  const anyChange = groupNames.some((g) => balances[g] && !isNeutral(balances[g]!));
  if (groupNames.length === 0) return <p className="p-3 text-xs text-ink-faint">The light groups appear once the first pass is in.</p>;
  return (
    <div className="flex flex-col gap-3 p-3" data-testid="light-balance">
      <p className="text-xs text-ink-muted">Brighten, dim or tint each light group on the finished buffers: no re-render needed.</p>
      {groupNames.map((g) => {
        const b = balances[g] ?? NEUTRAL_BALANCE;
        const stops = stopsOf(b.gain);
        return (
          <fieldset key={g} className="flex flex-col gap-1.5 rounded border border-line p-2" data-testid={`balance-${g}`}>
            <legend className="px-1 text-xs font-medium text-ink">{g}</legend>
            <div className="flex items-center gap-2">
              <label className="flex flex-1 flex-col gap-0.5 text-[11px] text-ink-faint">
                Gain {stops >= 0 ? "+" : ""}
                {stops.toFixed(2)} stops (×{formatReadout(b.gain, 3)})
                <input
                  type="range"
                  min={-6}
                  max={6}
                  step={0.05}
                  value={stops}
                  aria-label={`Group ${g}: gain in stops`}
                  className="accent-accent"
                  onChange={(e) => store.getState().setBalance(g, { gain: Math.pow(2, Number(e.target.value)) })}
                />
              </label>
              <label className="flex flex-col items-center gap-0.5 text-[11px] text-ink-faint">
                Tint
                <input
                  type="color"
                  aria-label={`Group ${g}: tint`}
                  value={toHex(b.tint)}
                  className="h-6 w-8 cursor-pointer rounded border border-line bg-raised"
                  onChange={(e) => store.getState().setBalance(g, { tint: fromHex(e.target.value) })}
                />
              </label>
              <label className="flex items-center gap-1 text-[11px] text-ink-faint" title="Switch the group off to see the rest alone">
                <input type="checkbox" aria-label={`Group ${g}: on`} checked={b.gain > 0} className="accent-accent" onChange={(e) => store.getState().setBalance(g, { gain: e.target.checked ? 1 : 0 })} />
                On
              </label>
              <Button size="sm" tone="quiet" onClick={() => store.getState().resetBalance(g)} aria-label={`Group ${g}: reset`} disabled={isNeutral(b)}>
                Reset
              </Button>
            </div>
          </fieldset>
        );
      })}
      <div className="flex flex-col gap-1">
        <Button
          tone="primary"
          size="sm"
          disabled={!anyChange || !canEdit || hasIssues}
          onClick={() => {
            try {
              const r = store.getState().writeBackBalance();
              toast(`Wrote the balance into ${r.changed} light value${r.changed === 1 ? "" : "s"}. Undo reverts it.`);
              for (const n of r.notes) toast(n);
            } catch (e) {
              toast(e instanceof Error ? e.message : String(e));
            }
          }}
        >
          Write balance into the scene
        </Button>
        <p className="text-[11px] text-ink-faint">Scales each light's radiance, power or intensity by its group's gain and tint, as one undoable edit; the render then restarts with the new values.</p>
      </div>
    </div>
  );
}

// ---------------------------------------------------------------------------------------------
// look

export function LookPanel() {
  const store = useWorkspaceStore();
  const view = useWorkspace((s) => s.view);
  // Counted by the coordinator worker from the same balanced image as the picture, after its exposure.
  const hist = usePreview((s) => s.picture?.histogram ?? null);
  return (
    <div className="flex flex-col gap-3 p-3" data-testid="look-panel">
      <DisplayFields />
      <div role="radiogroup" aria-label="Picture" className="flex gap-1 text-xs">
        {(
          [
            ["image", "Picture"],
            ["falseColour", "Exposure map"],
          ] as const
        ).map(([v, label]) => (
          <button
            key={v}
            type="button"
            role="radio"
            aria-checked={view === v}
            onClick={() => store.getState().setView(v)}
            className={cx("flex-1 rounded border px-2 py-1", view === v ? "border-accent text-ink" : "border-line text-ink-muted hover:text-ink")}
          >
            {label}
          </button>
        ))}
      </div>
      {view === "falseColour" ? <FalseColourLegend /> : null}
      <Histogram hist={hist} />
    </div>
  );
}

function FalseColourLegend() {
  return (
    <figure aria-label="Exposure map legend" data-testid="false-colour-legend">
      <figcaption className="mb-1 text-[11px] text-ink-faint">Stops from middle grey (0.18 after exposure); black = no light</figcaption>
      <ol className="grid grid-cols-13 gap-px text-center text-[10px] text-ink-muted">
        {FALSE_COLOUR_BANDS.map((b) => (
          <li key={b.label} title={`${b.label} stops: ${b.meaning}`} className="flex flex-col items-center gap-0.5">
            <span className="block h-3 w-full" style={{ background: `rgb(${b.colour.join(" ")})` }} />
            <span>{b.label.replace("≤ ", "≤").replace("≥ ", "≥")}</span>
          </li>
        ))}
      </ol>
    </figure>
  );
}

function Histogram({ hist }: { hist: HistogramData | null }) {
  if (!hist) return null;
  const max = Math.max(1, ...hist.counts);
  const bins = hist.counts.length;
  const zero = ((0 - hist.minStops) / (hist.maxStops - hist.minStops)) * 100;
  return (
    <figure aria-label="Luminance histogram" data-testid="histogram">
      <figcaption className="mb-1 flex justify-between text-[11px] text-ink-faint">
        <span>Luminance, stops from middle grey</span>
        <span>{hist.black > 0 ? `${((hist.black / hist.total) * 100).toFixed(1)}% unlit` : ""}</span>
      </figcaption>
      <svg viewBox={`0 0 ${bins} 40`} preserveAspectRatio="none" className="h-16 w-full rounded bg-raised" role="img" aria-label={`Histogram over ${bins} bins; log-average luminance ${formatReadout(hist.logAverage)}`}>
        {Array.from(hist.counts).map((c, i) => {
          const h = (Math.sqrt(c) / Math.sqrt(max)) * 40;
          return <rect key={i} x={i + 0.1} width={0.8} y={40 - h} height={h} className="fill-ink-muted" />;
        })}
        <line x1={(zero / 100) * bins} x2={(zero / 100) * bins} y1={0} y2={40} className="stroke-accent" strokeWidth={0.15} />
      </svg>
      <div className="flex justify-between text-[10px] text-ink-faint tabular-nums">
        <span>{hist.minStops}</span>
        <span>0</span>
        <span>+{hist.maxStops}</span>
      </div>
      <p className="mt-1 text-[11px] text-ink-faint tabular-nums">
        Log-average {formatReadout(hist.logAverage)} · brightest {formatReadout(hist.maxLuminance)}
        {hist.above > 0 ? ` · ${hist.above} px beyond +${hist.maxStops}` : ""}
      </p>
    </figure>
  );
}

// ---------------------------------------------------------------------------------------------
// measure

export function MeasurePanel() {
  const { cursor, meterAt, renderer } = usePreviewContext();
  const runId = usePreview((s) => s.runId);
  // A number, not the picture: the probe is asked again for each new picture without holding pixels here.
  const pictureVersion = usePreview((s) => (s.picture ? s.pictureVersion : 0));
  const probe = useProbe(renderer, cursor, pictureVersion);
  const [reading, setReading] = useState<{ at: [number, number]; r: MeterReading | null; error?: string } | null>(null);
  const [busy, setBusy] = useState(false);

  useEffect(() => {
    if (!meterAt || !renderer) return;
    let live = true;
    setBusy(true);
    renderer
      .meter(meterAt[0], meterAt[1])
      .then((r) => live && setReading({ at: meterAt, r }))
      .catch((e: unknown) => live && setReading({ at: meterAt, r: null, error: e instanceof Error ? e.message : String(e) }))
      .finally(() => live && setBusy(false));
    return () => {
      live = false;
    };
  }, [meterAt, renderer, runId]);

  return (
    <div className="flex flex-col gap-3 p-3 text-xs" data-testid="measure-panel">
      <section aria-label="Pixel probe">
        <h3 className="mb-1 font-medium text-ink">Pixel probe</h3>
        {probe ? (
          <dl className="grid grid-cols-[auto_1fr] gap-x-3 gap-y-0.5 tabular-nums" data-testid="probe">
            <dt className="text-ink-muted">Pixel</dt>
            <dd>
              {probe.x}, {probe.y}
            </dd>
            <dt className="text-ink-muted">Linear RGB</dt>
            <dd>{probe.rgb.map((v) => formatReadout(v)).join("  ")}</dd>
            <dt className="text-ink-muted">Luminance</dt>
            <dd>{formatReadout(probe.luminance)}</dd>
            <dt className="text-ink-muted">Exposure</dt>
            <dd>{probe.stops === null ? "no light" : `${probe.stops >= 0 ? "+" : ""}${probe.stops.toFixed(2)} stops from grey`}</dd>
          </dl>
        ) : (
          <p className="text-ink-faint">Point at the preview (or focus it and use the arrow keys).</p>
        )}
      </section>
      <section aria-label="Light meter" data-testid="light-meter">
        <h3 className="mb-1 font-medium text-ink">Light meter</h3>
        {!reading && !busy ? <p className="text-ink-faint">Click a surface in the preview (or press Enter on it) to estimate the light arriving there.</p> : null}
        {busy ? <p className="text-ink-muted">Measuring…</p> : null}
        {reading && !busy ? <MeterResult reading={reading} /> : null}
        <p className="mt-2 rounded border border-warn/40 bg-warn/10 px-2 py-1 text-[11px] text-warn">
          A visualisation estimate from this scene's relative light values, not a lighting-design calculation. Real installations follow local codes and the work of licensed lighting designers.
        </p>
      </section>
    </div>
  );
}

/**
 * The probe reading under the cursor, asked of the coordinator worker (it holds the linear buffers). Asked
 * again when the cursor moves or a new picture arrives (new pixels, balance or exposure); a slow answer to
 * an older question is ignored.
 */
function useProbe(renderer: PreviewRenderer | null, cursor: [number, number] | null, pictureVersion: number): ProbeReading | null {
  const [probe, setProbe] = useState<ProbeReading | null>(null);
  const x = cursor?.[0];
  const y = cursor?.[1];
  useEffect(() => {
    if (!renderer || x === undefined || y === undefined || pictureVersion === 0) {
      setProbe(null);
      return;
    }
    let live = true;
    renderer
      .probe(x, y)
      .then((r) => {
        if (live && r !== undefined) setProbe(r);
      })
      .catch(() => live && setProbe(null));
    return () => {
      live = false;
    };
  }, [renderer, x, y, pictureVersion]);
  return probe;
}

function MeterResult({ reading }: { reading: { at: [number, number]; r: MeterReading | null; error?: string } }) {
  const { r } = reading;
  if (reading.error) return <p className="text-danger">{reading.error}</p>;
  if (!r || !r.hit) return <p className="text-ink-muted">Nothing under pixel {reading.at.join(", ")}: the ray leaves the scene.</p>;
  const e = r.irradiance;
  const se = r.stdError;
  const lux = irradianceToLux(e);
  const luxSe = irradianceToLux(se as Rgb);
  return (
    <dl className="grid grid-cols-[auto_1fr] gap-x-3 gap-y-0.5 tabular-nums" data-testid="meter-reading">
      <dt className="text-ink-muted">At pixel</dt>
      <dd>{reading.at.join(", ")}</dd>
      <dt className="text-ink-muted">Irradiance</dt>
      <dd>
        {e.map((v, i) => `${formatReadout(v, 3)} ± ${formatReadout(se[i]!, 2)}`).join(" · ")} W/m² (R · G · B)
      </dd>
      <dt className="text-ink-muted">Illuminance</dt>
      <dd data-testid="meter-lux">
        ≈ {formatReadout(lux, 3)} ± {formatReadout(luxSe, 2)} lux
      </dd>
      <dt className="text-ink-muted">Assumes</dt>
      <dd className="text-ink-faint">
        {LUMINOUS_EFFICACY_LM_PER_W} lm/W on the Rec. 709 luminance of the RGB watts; {r.samples} samples; standard error shown after ±
      </dd>
    </dl>
  );
}
