import { useState, type FormEvent } from "react";
import { Form, useFetcher } from "react-router";
import { Card, Notice, buttonClass, inputClass, quietButtonClass } from "./page";
import { PreviewPlot } from "./preview-plot";
import { StatusBadge } from "./status-badge";

export interface StepGuideEntry {
  title: string;
  summary: string;
  params: Record<string, { label: string; help: string; required: boolean }>;
}

export interface DefinitionFormValues {
  name: string;
  description?: string | null;
  steps: { step: string; params: Record<string, unknown> }[];
  formats: string[];
  maxAttempts: number;
  backoffMs: number;
}

export interface PreviewReport {
  index: number;
  verticesIn: number;
  segmentsOut: number;
  maxDeviation: number;
  rmsDeviation: number;
  status: string;
  reason?: string;
}

export interface PreviewResult {
  datasetName: string;
  datasetVersion: number;
  featureIndex: number;
  crs: string;
  geographic: boolean;
  steps: { step: string; report: PreviewReport }[];
  report: PreviewReport;
  input: number[][][];
  result: number[][][];
  controlPoints: number[][][];
  bbox: [number, number, number, number] | null;
  properties: Record<string, unknown> | null;
}

export type PreviewAnswer = { preview: PreviewResult } | { previewError: string };

interface Props {
  mode: "new" | "edit";
  initial: DefinitionFormValues;
  guide: Record<string, StepGuideEntry>;
  formats: { id: string; label: string }[];
  datasets: { id: string; name: string; features: number; version: number }[];
  /** Problems from the last save, as sentences naming the step and field. */
  issues?: { field: string; message: string }[];
  error?: string;
  busy: boolean;
}

interface StepRow {
  key: number;
  step: string;
  params: Record<string, string>;
}

let nextKey = 1;
const toRow = (s: { step: string; params: Record<string, unknown> }): StepRow => ({
  key: nextKey++,
  step: s.step,
  params: Object.fromEntries(Object.entries(s.params ?? {}).map(([k, v]) => [k, v === undefined || v === null ? "" : String(v)])),
});

/** Maps an issue's field path (`steps.1.params.tolerance`) to the form field it concerns. */
function formField(path: string): string {
  const m = /^steps\.(\d+)\.params\.(\w+)/.exec(path);
  if (m) return `steps.${m[1]}.${m[2]}`;
  if (path === "backoffMs") return "backoffSeconds";
  return path;
}

/**
 * The editor of a definition: name, steps with their parameters (added, removed, reordered),
 * output formats and retry defaults, and a preview on one feature of a dataset before saving.
 */
export function DefinitionForm({ mode, initial, guide, formats, datasets, issues = [], error, busy }: Props) {
  const [steps, setSteps] = useState<StepRow[]>(() => (initial.steps.length ? initial.steps : [{ step: "fit", params: {} }]).map(toRow));
  const fetcher = useFetcher<PreviewAnswer>();
  const [previewDataset, setPreviewDataset] = useState(datasets[0]?.id ?? "");
  const stepNames = Object.keys(guide);
  const bad = new Map<string, string>();
  for (const i of issues) bad.set(formField(i.field), i.message);
  const fieldClass = (name: string) => `mt-1 ${inputClass} ${bad.has(name) ? "border-clay-600 ring-1 ring-clay-600" : ""}`;
  const chosenDataset = datasets.find((d) => d.id === previewDataset);

  function update(key: number, change: (row: StepRow) => StepRow) {
    setSteps((rows) => rows.map((r) => (r.key === key ? change(r) : r)));
  }
  function move(index: number, by: number) {
    setSteps((rows) => {
      const next = [...rows];
      const [row] = next.splice(index, 1);
      next.splice(index + by, 0, row!);
      return next;
    });
  }
  function onSubmit(event: FormEvent<HTMLFormElement>) {
    const submitter = (event.nativeEvent as SubmitEvent).submitter as HTMLButtonElement | null;
    if (submitter?.value === "preview") {
      event.preventDefault();
      fetcher.submit(new FormData(event.currentTarget, submitter), { method: "post" });
    }
  }

  const answer = fetcher.data;
  const previewing = fetcher.state !== "idle";
  return (
    <Form method="post" onSubmit={onSubmit} className="grid gap-6 lg:grid-cols-[3fr_2fr]" noValidate>
      <div className="space-y-6">
        {(error || issues.length > 0) && (
          <Notice tone="error">
            {error && <p>{error}</p>}
            {issues.length > 0 && (
              <ul className="list-disc pl-5">
                {issues.map((i, n) => (
                  <li key={n}>{i.message}</li>
                ))}
              </ul>
            )}
          </Notice>
        )}
        <Card title="About">
          <label className="block text-sm font-medium">
            Name
            <input
              name="name"
              required
              defaultValue={initial.name}
              readOnly={mode === "edit"}
              aria-invalid={bad.has("name")}
              className={`${fieldClass("name")} ${mode === "edit" ? "bg-paper text-ink-soft" : ""}`}
              placeholder="e.g. Roads to smooth curves"
            />
          </label>
          {mode === "edit" && <p className="mt-1 text-xs text-ink-faint">A definition keeps its name; saving makes the next version.</p>}
          <label className="mt-3 block text-sm font-medium">
            Description <span className="font-normal text-ink-faint">(optional)</span>
            <textarea name="description" rows={2} defaultValue={initial.description ?? ""} className={fieldClass("description")} />
          </label>
        </Card>

        <Card title="Steps">
          <p className="mb-3 text-sm text-ink-soft">Each feature goes through the steps in this order.</p>
          <ol className="space-y-4">
            {steps.map((row, i) => {
              const g = guide[row.step];
              return (
                <li key={row.key} className={`rounded-md border p-3 ${bad.has(`steps.${i}.step`) ? "border-clay-600" : "border-rule"}`}>
                  <div className="flex flex-wrap items-center gap-2">
                    <span className="text-sm font-semibold tabular-nums">{i + 1}.</span>
                    <select
                      name={`steps.${i}.step`}
                      value={row.step}
                      aria-label={`Step ${i + 1}`}
                      onChange={(e) => update(row.key, (r) => ({ ...r, step: e.target.value }))}
                      className={`${inputClass} w-auto`}
                    >
                      {stepNames.map((s) => (
                        <option key={s} value={s}>
                          {guide[s]!.title} ({s})
                        </option>
                      ))}
                    </select>
                    <div className="ml-auto flex gap-1">
                      <button type="button" className={quietButtonClass} disabled={i === 0} onClick={() => move(i, -1)} aria-label={`Move step ${i + 1} up`}>
                        ↑
                      </button>
                      <button type="button" className={quietButtonClass} disabled={i === steps.length - 1} onClick={() => move(i, 1)} aria-label={`Move step ${i + 1} down`}>
                        ↓
                      </button>
                      <button type="button" className={quietButtonClass} disabled={steps.length === 1} onClick={() => setSteps((rows) => rows.filter((r) => r.key !== row.key))}>
                        Remove
                      </button>
                    </div>
                  </div>
                  {g && <p className="mt-2 text-xs text-ink-soft">{g.summary}</p>}
                  <div className="mt-2 grid gap-3 sm:grid-cols-2">
                    {g &&
                      Object.entries(g.params).map(([param, info]) => {
                        const name = `steps.${i}.${param}`;
                        return (
                          <label key={param} className="block text-sm font-medium">
                            {info.label} {!info.required && <span className="font-normal text-ink-faint">(optional)</span>}
                            <input
                              name={name}
                              type="number"
                              step="any"
                              value={row.params[param] ?? ""}
                              onChange={(e) => update(row.key, (r) => ({ ...r, params: { ...r.params, [param]: e.target.value } }))}
                              aria-invalid={bad.has(name)}
                              className={fieldClass(name)}
                            />
                            <span className="mt-0.5 block text-xs font-normal text-ink-faint">{bad.get(name) ?? info.help}</span>
                          </label>
                        );
                      })}
                  </div>
                </li>
              );
            })}
          </ol>
          <button type="button" className={`${quietButtonClass} mt-3`} onClick={() => setSteps((rows) => [...rows, toRow({ step: rows.length ? "discretise" : "fit", params: {} })])} disabled={steps.length >= 8}>
            Add a step
          </button>
        </Card>

        <Card title="Output and retries">
          <fieldset>
            <legend className="text-sm font-medium">Output formats</legend>
            <div className="mt-1 grid gap-1 sm:grid-cols-2">
              {formats.map((f) => (
                <label key={f.id} className="flex items-center gap-2 text-sm">
                  <input type="checkbox" name="formats" value={f.id} defaultChecked={initial.formats.includes(f.id)} className="accent-tide-600" />
                  {f.label}
                </label>
              ))}
            </div>
            {bad.has("formats") && <p className="mt-1 text-xs text-clay-600">{bad.get("formats")}</p>}
          </fieldset>
          <div className="mt-3 grid gap-3 sm:grid-cols-2">
            <label className="block text-sm font-medium">
              Attempts
              <input name="maxAttempts" type="number" min="1" max="10" step="1" defaultValue={initial.maxAttempts} className={fieldClass("maxAttempts")} />
              <span className="mt-0.5 block text-xs font-normal text-ink-faint">Tries before a job counts as failed (queue or storage trouble only; bad geometry is reported, not retried).</span>
            </label>
            <label className="block text-sm font-medium">
              First retry after (s)
              <input name="backoffSeconds" type="number" min="0" step="any" defaultValue={initial.backoffMs / 1000} className={fieldClass("backoffSeconds")} />
              <span className="mt-0.5 block text-xs font-normal text-ink-faint">Each further retry waits twice as long.</span>
            </label>
          </div>
        </Card>
        <div className="flex gap-2">
          <button type="submit" name="intent" value="save" className={buttonClass} disabled={busy}>
            {busy ? "Saving…" : mode === "new" ? "Save definition" : "Save as new version"}
          </button>
        </div>
      </div>

      <div className="space-y-6">
        <Card title="Try it on one feature">
          {datasets.length === 0 ? (
            <p className="text-sm text-ink-soft">Upload a dataset to try the steps on one of its features.</p>
          ) : (
            <>
              <div className="grid gap-3 sm:grid-cols-[2fr_1fr]">
                <label className="block text-sm font-medium">
                  Dataset
                  <select name="previewDataset" value={previewDataset} onChange={(e) => setPreviewDataset(e.target.value)} className={`mt-1 ${inputClass}`}>
                    {datasets.map((d) => (
                      <option key={d.id} value={d.id}>
                        {d.name} v{d.version}
                      </option>
                    ))}
                  </select>
                </label>
                <label className="block text-sm font-medium">
                  Feature
                  <input name="previewFeature" type="number" min="0" max={chosenDataset ? chosenDataset.features - 1 : undefined} step="1" defaultValue={0} className={`mt-1 ${inputClass}`} />
                </label>
              </div>
              <p className="mt-1 text-xs text-ink-faint">Features are numbered from 0{chosenDataset ? `; this dataset has ${chosenDataset.features}` : ""}. Nothing is saved.</p>
              <button type="submit" name="intent" value="preview" className={`${quietButtonClass} mt-3 w-full`} disabled={previewing}>
                {previewing ? "Running the steps…" : "Preview"}
              </button>
            </>
          )}
          {answer && "previewError" in answer && (
            <div className="mt-4">
              <Notice tone="error">{answer.previewError}</Notice>
            </div>
          )}
          {answer && "preview" in answer && <PreviewFigures preview={answer.preview} />}
        </Card>
      </div>
    </Form>
  );
}

function metres(v: number): string {
  return v >= 0 && Number.isFinite(v) ? `${v.toFixed(v < 1 ? 3 : 2)} m` : "–";
}

function PreviewFigures({ preview }: { preview: PreviewResult }) {
  const r = preview.report;
  const label = typeof preview.properties?.name === "string" ? ` (${preview.properties.name})` : "";
  return (
    <div className="mt-4 space-y-3" data-testid="preview">
      <p className="text-sm">
        Feature {preview.featureIndex}
        {label} of {preview.datasetName} v{preview.datasetVersion}: <StatusBadge status={r.status} />
      </p>
      <dl className="grid grid-cols-2 gap-x-4 gap-y-1 text-sm">
        <dt className="text-ink-soft">Vertices in</dt>
        <dd className="tabular-nums" data-testid="preview-vertices">{r.verticesIn.toLocaleString("en-GB")}</dd>
        <dt className="text-ink-soft">Segments out</dt>
        <dd className="tabular-nums" data-testid="preview-segments">{r.segmentsOut.toLocaleString("en-GB")}</dd>
        <dt className="text-ink-soft">Max deviation</dt>
        <dd className="tabular-nums">{metres(r.maxDeviation)}</dd>
        <dt className="text-ink-soft">RMS deviation</dt>
        <dd className="tabular-nums">{metres(r.rmsDeviation)}</dd>
      </dl>
      {r.reason && <p className="text-xs text-ochre-600">{r.reason}</p>}
      <PreviewPlot input={preview.input} result={preview.result} controlPoints={preview.controlPoints} bbox={preview.bbox} geographic={preview.geographic} />
      {preview.steps.length > 1 && (
        <table className="w-full text-xs">
          <caption className="mb-1 text-left text-ink-soft">Each step on its own</caption>
          <thead className="text-left text-ink-soft">
            <tr>
              <th className="py-0.5 pr-2 font-medium">Step</th>
              <th className="py-0.5 pr-2 text-right font-medium">In</th>
              <th className="py-0.5 pr-2 text-right font-medium">Out</th>
              <th className="py-0.5 pr-2 text-right font-medium">Max dev.</th>
              <th className="py-0.5 font-medium">Status</th>
            </tr>
          </thead>
          <tbody>
            {preview.steps.map((s, i) => (
              <tr key={i} className="border-t border-rule">
                <td className="py-0.5 pr-2">{i + 1}. {s.step}</td>
                <td className="py-0.5 pr-2 text-right tabular-nums">{s.report.verticesIn}</td>
                <td className="py-0.5 pr-2 text-right tabular-nums">{s.report.segmentsOut}</td>
                <td className="py-0.5 pr-2 text-right tabular-nums">{metres(s.report.maxDeviation)}</td>
                <td className="py-0.5">{s.report.status}</td>
              </tr>
            ))}
          </tbody>
        </table>
      )}
    </div>
  );
}
