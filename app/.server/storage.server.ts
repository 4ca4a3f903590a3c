import { randomUUID } from "node:crypto";
import { mkdir, rename, rm, stat } from "node:fs/promises";
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
