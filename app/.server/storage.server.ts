import { randomUUID } from "node:crypto";
import { mkdir, readdir, rename, rm, stat } from "node:fs/promises";
import { join, resolve, sep } from "node:path";
import { env } from "./env.server";

/**
 * Files on disk under STORAGE_DIR. Paths stored in the database are relative to it, so the
 * folder can move. Every write lands in a staging folder first and is renamed into place,
 * so a reader never sees a half-written file.
 */
export function storageRoot(): string {
  return resolve(env().STORAGE_DIR);
}

export function storagePath(relative: string): string {
  const root = storageRoot();
  const full = resolve(root, relative);
  if (full !== root && !full.startsWith(root + sep)) throw new Error(`Storage path escapes the storage folder: ${relative}`);
  return full;
}

/** A fresh private folder for work in progress, on the same file system as the final place. */
export async function makeStagingDir(): Promise<string> {
  const dir = join(storageRoot(), "staging", randomUUID());
  await mkdir(dir, { recursive: true });
  return dir;
}

/** Moves a finished staging folder to its final relative path (replacing nothing). */
export async function commitStagingDir(stagingDir: string, relative: string): Promise<string> {
  const target = storagePath(relative);
  await mkdir(resolve(target, ".."), { recursive: true });
  await rename(stagingDir, target);
  return relative;
}

export async function removeStored(relativeOrAbsolute: string): Promise<void> {
  const full = relativeOrAbsolute.startsWith(storageRoot()) ? relativeOrAbsolute : storagePath(relativeOrAbsolute);
  await rm(full, { recursive: true, force: true });
}

export async function fileSize(path: string): Promise<number> {
  return (await stat(path)).size;
}

/** Staging folders untouched for this long belong to a process that died (a day; jobs write continually). */
export const STAGING_MAX_AGE_MS = 24 * 60 * 60 * 1000;

/**
 * Removes staging folders left by processes that were killed mid-write: those in which nothing
 * has been written for `maxAgeMs`. A folder in use is written to continually (an upload or a
 * job's outputs), so its newest file stays recent. Returns the number of folders removed.
 */
export async function sweepStaleStaging(maxAgeMs: number = STAGING_MAX_AGE_MS, now: number = Date.now()): Promise<number> {
  const root = join(storageRoot(), "staging");
  let names: string[];
  try {
    names = await readdir(root);
  } catch {
    return 0;
  }
  let removed = 0;
  for (const name of names) {
    const dir = join(root, name);
    const newest = await newestWrite(dir).catch(() => now);
    if (now - newest > maxAgeMs) {
      await rm(dir, { recursive: true, force: true });
      removed++;
    }
  }
  return removed;
}

/** The latest modification time of a folder and everything in it. */
async function newestWrite(path: string): Promise<number> {
  const info = await stat(path);
  let newest = info.mtimeMs;
  if (info.isDirectory()) {
    for (const entry of await readdir(path)) newest = Math.max(newest, await newestWrite(join(path, entry)));
  }
  return newest;
}
