import { copyFileSync, existsSync, mkdirSync, readdirSync, readFileSync, renameSync, statSync, utimesSync, writeFileSync } from 'node:fs';
import { basename, extname, join } from 'node:path';
import type { Intake, IntakeResult } from './ingest.js';
import { summarise } from './ingest.js';

/**
 * The inbox folder source. A file is read once it is complete: written
 * elsewhere and renamed into place, or unchanged for `settleMs`. After its
 * notices are stored it moves to processed/ (every notice accepted or a
 * duplicate), or to rejected/ (every notice rejected) with `<name>.reasons.json`
 * beside it; a file with both goes to processed/ with the reasons file too.
 * A file is never deleted.
 */

export const INBOX_EXTENSIONS = ['.json', '.ndjson'] as const;
const SEED_MARKER = '.seeded';

export interface InboxFileOutcome {
  file: string;
  movedTo: string;
  results: IntakeResult[];
}

function stamp(now: Date): string {
  return now.toISOString().replace(/[-:]/g, '').replace(/\.\d+Z$/, 'Z');
}

function uniqueTarget(dir: string, name: string, now: Date): string {
  let candidate = join(dir, `${stamp(now)}_${name}`);
  for (let k = 2; existsSync(candidate); k++) candidate = join(dir, `${stamp(now)}_${k}_${name}`);
  return candidate;
}

export function ensureInboxFolders(inboxPath: string): void {
  for (const sub of ['', 'processed', 'rejected']) mkdirSync(join(inboxPath, sub), { recursive: true });
}

/**
 * Seeds the inbox once (a marker file records that it was done): copies the
 * notices of `source` when it is a folder, or calls it to write them. Returns the files.
 */
export function seedInbox(inboxPath: string, source: string | ((inboxPath: string) => string[])): string[] {
  ensureInboxFolders(inboxPath);
  const marker = join(inboxPath, SEED_MARKER);
  if (existsSync(marker)) return [];
  if (typeof source === 'function') {
    const written = source(inboxPath);
    writeFileSync(marker, `seeded with ${written.length} simulated notices\n`);
    return written;
  }
  const demoDir = source;
  if (!existsSync(demoDir)) return [];
  const files = readdirSync(demoDir).filter((f) => (INBOX_EXTENSIONS as readonly string[]).includes(extname(f)));
  for (const f of files) {
    const from = join(demoDir, f);
    copyFileSync(from, join(inboxPath, f));
    // Keep the original time so the copies count as settled, not as files still being written.
    const st = statSync(from);
    utimesSync(join(inboxPath, f), st.atime, st.mtime);
  }
  writeFileSync(marker, `seeded from ${demoDir}\n`);
  return files;
}

/** Files in the inbox that are ready to read at `now`, oldest first. */
export function readyInboxFiles(inboxPath: string, now: Date, settleMs: number): string[] {
  if (!existsSync(inboxPath)) return [];
  return readdirSync(inboxPath, { withFileTypes: true })
    .filter((d) => d.isFile() && !d.name.startsWith('.') && (INBOX_EXTENSIONS as readonly string[]).includes(extname(d.name)))
    .map((d) => ({ name: d.name, stat: statSync(join(inboxPath, d.name)) }))
    .filter(({ stat }) => now.getTime() - stat.mtimeMs >= settleMs)
    .sort((a, b) => a.stat.mtimeMs - b.stat.mtimeMs || a.name.localeCompare(b.name))
    .map(({ name }) => name);
}

/** Reads, stores and files away every ready file. */
export function processInbox(intake: Intake, inboxPath: string, now: Date, settleMs: number): InboxFileOutcome[] {
  ensureInboxFolders(inboxPath);
  const outcomes: InboxFileOutcome[] = [];
  for (const name of readyInboxFiles(inboxPath, now, settleMs)) {
    const path = join(inboxPath, name);
    const text = readFileSync(path, 'utf8');
    const source = `inbox:${name}`;
    const results = extname(name) === '.ndjson' ? intake.ingestNdjson(text, source) : intake.ingestJson(text, source);
    const counts = summarise(results);
    const folder = counts.rejected > 0 && counts.accepted + counts.duplicate === 0 ? 'rejected' : 'processed';
    const target = uniqueTarget(join(inboxPath, folder), name, now);
    if (counts.rejected > 0) {
      const reasons = results.map((r, index) =>
        r.status === 'rejected'
          ? { index, status: r.status, noticeId: r.noticeId, rejectionId: r.rejectionId, reasons: r.reasons }
          : { index, status: r.status, noticeId: r.noticeId },
      );
      writeFileSync(`${target}.reasons.json`, `${JSON.stringify({ file: name, results: reasons }, null, 2)}\n`);
    }
    renameSync(path, target);
    outcomes.push({ file: name, movedTo: join(folder, basename(target)), results });
  }
  return outcomes;
}
