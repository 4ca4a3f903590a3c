import type { BackoffStrategy } from "bullmq";

/**
 * Retry delays of Lissom jobs: exponential backoff with "equal jitter" (Marc Brooker,
 * "Exponential Backoff And Jitter", AWS Architecture Blog, 2015): the n-th retry waits
 * half of `base × 2^(n−1)` plus a random share of the other half, capped at `MAX_DELAY_MS`.
 * Half is kept so a retry never comes back at once; the random half spreads the retries of
 * many jobs that failed together (a Redis or disk outage) instead of sending them back in
 * one wave.
 *
 * Queue entries name the strategy `{ type: BACKOFF_TYPE, delay: base }`; workers install
 * `backoffStrategy` (BullMQ's custom backoff strategy setting).
 */
export const BACKOFF_TYPE = "lissom-jitter";

/** Defaults when a job's definition sets none: 3 attempts, 2 s before the first retry. */
export const DEFAULT_MAX_ATTEMPTS = 3;
export const DEFAULT_BACKOFF_MS = 2000;

/** No retry waits longer than an hour, however many attempts a definition allows. */
export const MAX_DELAY_MS = 60 * 60 * 1000;

/** The delay before retry number `retry` (1 for the first retry), with `random` in [0, 1). */
export function retryDelay(baseMs: number, retry: number, random: number = Math.random()): number {
  const exponent = Math.min(Math.max(retry, 1) - 1, 30);
  const ceiling = Math.min(MAX_DELAY_MS, Math.max(0, baseMs) * 2 ** exponent);
  return Math.round(ceiling / 2 + random * (ceiling / 2));
}

export const backoffStrategy: BackoffStrategy = (attemptsMade, type, _err, job) => {
  const base = (job?.opts.backoff as { delay?: number } | undefined)?.delay ?? DEFAULT_BACKOFF_MS;
  if (type !== BACKOFF_TYPE) throw new Error(`Unknown backoff type ${String(type)}`);
  return retryDelay(base, attemptsMade);
};
