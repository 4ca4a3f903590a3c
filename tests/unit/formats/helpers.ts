import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";

/** A scratch folder per test file, removed by `cleanup()`. */
export function scratch(prefix = "lissom-formats-") {
  const dir = mkdtempSync(join(tmpdir(), prefix));
  return {
    dir,
    /** Writes a file and returns it as an upload entry. */
    file(name: string, content: string | Buffer | Uint8Array) {
      const path = join(dir, name);
      writeFileSync(path, content);
      return { path, name };
    },
    path(name: string) {
      return join(dir, name);
    },
    cleanup() {
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

export async function collect<T>(it: AsyncIterable<T>): Promise<T[]> {
  const out: T[] = [];
  for await (const x of it) out.push(x);
  return out;
}
