import { db, schema } from "../app/.server/db/client.server";
import { logger } from "../app/.server/logger.server";

export type LogLevel = "debug" | "info" | "warn" | "error";

/**
 * A job's log: every line goes to pino (stdout) and to the job's log entries in the database,
 * which the console tails. `into` is the database handle to write with: a transaction when a
 * line must appear together with the state it describes (the finishing line with the
 * `successful` status, so nobody sees a finished job without it).
 */
export function jobLog(jobId: string, attempt: number | null, into: Pick<ReturnType<typeof db>, "insert"> = db()) {
  const log = logger.child({ jobId, attempt });
  async function write(level: LogLevel, message: string, featureIndex?: number) {
    log[level]({ featureIndex }, message);
    await into.insert(schema.logEntries).values({ jobId, attempt, time: new Date(), level, message, featureIndex });
  }
  return {
    debug: (m: string, f?: number) => write("debug", m, f),
    info: (m: string, f?: number) => write("info", m, f),
    warn: (m: string, f?: number) => write("warn", m, f),
    error: (m: string, f?: number) => write("error", m, f),
  };
}
export type JobLog = ReturnType<typeof jobLog>;
