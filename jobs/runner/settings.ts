import { z } from "zod";

/**
 * The runner's operational settings, read from the environment each time they are asked for
 * (so a test or an operator's restart picks up a change), each with a working default.
 *
 * - `LISSOM_FANOUT_VERTICES` (default 200 000; 0 turns fan-out off): a dataset version with
 *   more vertices than this is cut into chunk jobs. Measured on a 2-core machine, fitting runs
 *   at roughly 20 000 vertices per second per core (tests/bench/runner.bench.ts prints the
 *   figure), so below the threshold a job takes about 10 s on one core and the extra split
 *   and merge passes (a read and a write of the data each, a few per cent of the fitting
 *   time) and the queue round trips would not pay for themselves.
 * - `LISSOM_CHUNK_VERTICES` (default 100 000): the size a chunk is filled up to, in vertices;
 *   features are never cut, so a chunk holds whole features and may go over by one feature.
 *   About 5 s of fitting per chunk: the per-chunk overhead stays near 1 %, a crash loses at most
 *   one chunk's work, a dataset just over the threshold gives two chunks (one per worker of two)
 *   and a 1-million-vertex one ten, so two workers finish within one chunk of each other.
 * - `LISSOM_LOCK_MS` (default 30 000): BullMQ lock duration of a worker's jobs; a worker whose
 *   process died loses its jobs to another worker after about this long (the stalled check
 *   runs at the same interval).
 * - `LISSOM_HEARTBEAT_MS` (default 10 000): how often a worker writes its heartbeat;
 *   /healthz calls a worker stale after three missed beats.
 * - `LISSOM_SHUTDOWN_MS` (default 30 000): the longest a worker waits on SIGTERM for running
 *   features to finish before it exits anyway (its jobs then come back through the stalled
 *   check).
 * - `LISSOM_RECONCILE_MS` (default 30 000): how often the web process looks for accepted or
 *   running jobs whose queue entry is gone (a Redis restarted without persistence) and queues
 *   them again.
 * - `LISSOM_QUEUE_PREFIX` (default "bull", BullMQ's own): the key prefix of Lissom's queues,
 *   so two installations (or test runs) can share one Redis.
 */
const schema = z.object({
  LISSOM_FANOUT_VERTICES: z.coerce.number().int().min(0).default(200_000),
  LISSOM_CHUNK_VERTICES: z.coerce.number().int().min(1).default(100_000),
  LISSOM_LOCK_MS: z.coerce.number().int().min(200).default(30_000),
  LISSOM_HEARTBEAT_MS: z.coerce.number().int().min(50).default(10_000),
  LISSOM_SHUTDOWN_MS: z.coerce.number().int().min(100).default(30_000),
  LISSOM_RECONCILE_MS: z.coerce.number().int().min(100).default(30_000),
  LISSOM_QUEUE_PREFIX: z.string().regex(/^[\w.-]+$/, "letters, digits, '.', '_' and '-' only").default("bull"),
});

export type RunnerSettings = z.infer<typeof schema>;

export function runnerSettings(): RunnerSettings {
  const picked = Object.fromEntries(Object.keys(schema.shape).map((k) => [k, emptyToUndefined(process.env[k])]));
  const parsed = schema.safeParse(picked);
  if (!parsed.success) {
    const lines = parsed.error.issues.map((i) => `  ${i.path.join(".")}: ${i.message}`);
    throw new Error(`Lissom's job runner cannot start: bad environment settings\n${lines.join("\n")}`);
  }
  return parsed.data;
}

function emptyToUndefined(value: string | undefined): string | undefined {
  return value === undefined || value.trim() === "" ? undefined : value;
}
