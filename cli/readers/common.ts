/**
 * Small helpers shared by the readers: turning file-system failures into one readable phrase,
 * and making column names usable as keys.
 */

/** A short, human phrase for a failed open/read; Node's own messages repeat the syscall and path. */
export function describeIoError(err: unknown): string {
  const code = (err as { code?: unknown } | null)?.code;
  switch (code) {
    case 'ENOENT':
      return 'no such file or directory';
    case 'EACCES':
    case 'EPERM':
      return 'permission denied';
    case 'EISDIR':
      return 'it is a directory';
    case 'ENOTDIR':
      return 'a part of the path is not a directory';
    case 'EMFILE':
    case 'ENFILE':
      return 'too many open files';
    default:
      return err instanceof Error ? err.message : String(err);
  }
}

/** How a reader names its input in messages: '-' reads badly in a sentence. */
export function displayName(path: string): string {
  return path === '-' ? 'standard input' : path;
}

/**
 * Names as the file gives them, trimmed, with empty and repeated ones replaced so that every
 * column can be addressed by name (bindings, config and reports all key on it). The first column
 * holding a name keeps it; the renames are explained in `notes` so the user can find them.
 */
export function uniqueColumnNames(raw: readonly string[]): { names: string[]; notes: string[] } {
  const trimmed = raw.map((n) => n.trim());
  // Reserve every real name first, so an invented `mass_2` never steals a later genuine `mass_2`.
  const taken = new Set(trimmed.filter((n) => n !== ''));
  const seen = new Map<string, number>(); // name -> 1-based column that first used it
  const names: string[] = [];
  const notes: string[] = [];
  for (let i = 0; i < trimmed.length; i++) {
    const name = trimmed[i];
    if (name === '') {
      const invented = freshName(`column_${i + 1}`, taken);
      names.push(invented);
      notes.push(`column ${i + 1} has no name in the header; it is called ${invented}`);
      continue;
    }
    const first = seen.get(name);
    if (first === undefined) {
      seen.set(name, i + 1);
      names.push(name);
      continue;
    }
    let k = 2;
    while (taken.has(`${name}_${k}`)) k++;
    const invented = `${name}_${k}`;
    taken.add(invented);
    names.push(invented);
    notes.push(`column ${i + 1} repeats the name '${name}' of column ${first}; it is called ${invented}`);
  }
  return { names, notes };
}

function freshName(base: string, taken: Set<string>): string {
  let name = base;
  for (let k = 2; taken.has(name); k++) name = `${base}_${k}`;
  taken.add(name);
  return name;
}

/** Most rows per batch: per-batch buffers are allocated up front, so a huge value must not reach them. */
export const MAX_BATCH_SIZE = 1 << 20;

/** Rows per batch from the options, guarded against zero, negatives, fractions and huge values. */
export function batchSizeOf(value: number | undefined): number {
  if (value === undefined || !Number.isFinite(value) || value < 1) return 16384;
  return Math.min(MAX_BATCH_SIZE, Math.floor(value));
}
