import { useEffect, useState } from "react";
import { Form, useFetcher } from "react-router";
import { buttonClass, inputClass } from "./page";

/** A time in the schedule's own time zone. */
export function when(date: Date | string | null | undefined, timezone?: string): string {
  if (!date) return "–";
  return new Date(date).toLocaleString("en-GB", { timeZone: timezone, dateStyle: "medium", timeStyle: "medium" });
}

/** The fields of a schedule, with the next run times shown while the cron expression is typed. */
export function ScheduleFields({
  definitions,
  datasets,
  timezones,
  initial,
  busy,
  submitLabel,
  withPaused = true,
}: {
  definitions: { id: string; name: string; version: number }[];
  datasets: { id: string; name: string }[];
  timezones: string[];
  initial: { definition?: string; dataset?: string; cron?: string; timezone?: string };
  busy: boolean;
  submitLabel: string;
  withPaused?: boolean;
}) {
  const check = useFetcher<{ check: { ok: true; times: string[] } | { ok: false; message: string } }>();
  const [cron, setCron] = useState(initial.cron ?? "0 2 * * *");
  const [timezone, setTimezone] = useState(initial.timezone ?? "UTC");
  useEffect(() => {
    const timer = setTimeout(() => check.submit({ intent: "check", cron, timezone }, { method: "post", action: "/schedules" }), 300);
    return () => clearTimeout(timer);
  }, [cron, timezone]);
  const result = check.data?.check;
  return (
    <Form method="post" className="grid gap-3 sm:grid-cols-2">
      <label className="block text-sm font-medium">
        Definition
        <select name="definition" defaultValue={initial.definition} className={`mt-1 ${inputClass}`}>
          {definitions.map((d) => (
            <option key={d.id} value={d.id}>
              {d.name} v{d.version}
            </option>
          ))}
        </select>
      </label>
      <label className="block text-sm font-medium">
        Dataset <span className="font-normal text-ink-faint">(each run takes its latest version)</span>
        <select name="dataset" defaultValue={initial.dataset} className={`mt-1 ${inputClass}`}>
          {datasets.map((d) => (
            <option key={d.id} value={d.id}>
              {d.name}
            </option>
          ))}
        </select>
      </label>
      <label className="block text-sm font-medium">
        Cron expression
        <input name="cron" value={cron} onChange={(e) => setCron(e.target.value)} className={`mt-1 font-mono ${inputClass}`} />
        <span className="mt-0.5 block text-xs font-normal text-ink-faint">minute hour day-of-month month day-of-week, e.g. 0 2 * * * for 02:00 daily; a sixth field in front counts seconds.</span>
      </label>
      <label className="block text-sm font-medium">
        Time zone
        <input name="timezone" list="timezones" value={timezone} onChange={(e) => setTimezone(e.target.value)} className={`mt-1 ${inputClass}`} />
        <datalist id="timezones">
          {timezones.map((z) => (
            <option key={z} value={z} />
          ))}
        </datalist>
      </label>
      <div className="sm:col-span-2 text-sm" aria-live="polite" data-testid="cron-check">
        {result?.ok === false && <p className="text-clay-600">{result.message}</p>}
        {result?.ok && (
          <p className="text-ink-soft">
            Next runs: {result.times.map((t) => new Date(t).toLocaleString("en-GB", { timeZone: timezone, dateStyle: "medium", timeStyle: "medium" })).join(" · ")} ({timezone})
          </p>
        )}
      </div>
      <div className="flex items-center gap-4 sm:col-span-2">
        {withPaused && (
          <label className="flex items-center gap-2 text-sm">
            <input type="checkbox" name="paused" className="accent-tide-600" /> Start paused
          </label>
        )}
        <button type="submit" name="intent" value="save" className={`${buttonClass} ml-auto`} disabled={busy}>
          {busy ? "Saving…" : submitLabel}
        </button>
      </div>
    </Form>
  );
}

