import { randomBytes } from "node:crypto";
import { open, rename, rm, type FileHandle } from "node:fs/promises";
import { basename, dirname, join } from "node:path";

/** Buffered, awaited writes to a file: text or bytes gather up to `flushBytes`, then go out. */
export class FileSink {
  private parts: (string | Uint8Array)[] = [];
  private pending = 0;
  bytes = 0;
  private constructor(
    private fh: FileHandle,
    private flushBytes: number,
  ) {}

  static async create(path: string, flushBytes = 1 << 20): Promise<FileSink> {
    return new FileSink(await open(path, "w"), flushBytes);
  }

  async write(chunk: string | Uint8Array): Promise<void> {
    this.parts.push(chunk);
    this.pending += typeof chunk === "string" ? chunk.length : chunk.byteLength;
    if (this.pending >= this.flushBytes) await this.flush();
  }

  async flush(): Promise<void> {
    if (this.parts.length === 0) return;
    const buf = Buffer.concat(this.parts.map((p) => (typeof p === "string" ? Buffer.from(p, "utf8") : p)));
    this.parts = [];
    this.pending = 0;
    await this.fh.write(buf, 0, buf.length);
    this.bytes += buf.length;
  }

  /** Writes at a position (header patches), after flushing what is buffered. */
  async writeAt(data: Uint8Array, position: number): Promise<void> {
    await this.flush();
    await this.fh.write(data, 0, data.byteLength, position);
  }

  async close(): Promise<void> {
    await this.flush();
    await this.fh.close();
  }

  /** Closes without flushing (after a failure). */
  async abandon(): Promise<void> {
    this.parts = [];
    await this.fh.close().catch(() => {});
  }
}

/** A temporary name beside `dest`, so the final rename stays on one file system. */
export function tempPathFor(dest: string): string {
  return join(dirname(dest), `.${basename(dest)}.${randomBytes(6).toString("hex")}.partial`);
}

/**
 * Writes files under temporary names and renames them into place only when every one is
 * complete: a failure leaves none of them behind (nothing half-written).
 */
export async function writeAtomically<T>(dests: string[], work: (temps: string[]) => Promise<T>): Promise<T> {
  const temps = dests.map(tempPathFor);
  const renamed: string[] = [];
  try {
    const result = await work(temps);
    // The first destination is the main file: it goes last, so its presence means all are there.
    for (let i = dests.length - 1; i >= 0; i--) {
      await rename(temps[i]!, dests[i]!);
      renamed.push(dests[i]!);
    }
    return result;
  } catch (error) {
    await Promise.all([...temps, ...renamed].map((p) => rm(p, { force: true })));
    throw error;
  }
}
