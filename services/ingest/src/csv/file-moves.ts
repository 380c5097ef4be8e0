/** Moving a finished file out of the drop folder: to processed/ or rejected/ (with the reason beside it). */
import { copyFile, mkdir, rename, stat, unlink, writeFile } from 'node:fs/promises';
import { basename, join } from 'node:path';
import type { IngestError } from '../errors.js';

export async function moveFile(path: string, dir: string, suffix: string): Promise<string> {
  await mkdir(dir, { recursive: true });
  let target = join(dir, basename(path));
  try {
    await stat(target);
    // A file of the same name was processed before: keep both.
    target = join(dir, `${basename(path)}.${suffix}`);
  } catch {
    // no file of that name yet
  }
  try {
    await rename(path, target);
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code !== 'EXDEV') throw error;
    await copyFile(path, target);
    await unlink(path);
  }
  return target;
}

/** Moves a refused file to the rejected folder with a .reason.txt beside it; returns where it went. */
export async function rejectFile(
  path: string,
  dir: string,
  checksum: string,
  error: IngestError,
): Promise<string> {
  const movedTo = await moveFile(path, dir, `rejected-${checksum.slice(0, 12)}`);
  await writeFile(
    `${movedTo}.reason.txt`,
    `${error.message}\ncode: ${error.code}\ndetails: ${JSON.stringify(error.details)}\nsha256: ${checksum}\n`,
  );
  return movedTo;
}
