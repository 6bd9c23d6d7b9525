import { copyFileSync, existsSync, mkdirSync, readdirSync, readFileSync, renameSync, statSync, utimesSync, writeFileSync } from 'node:fs';
import { basename, extname, join } from 'node:path';
import type { SourceStore } from '../store/sources.js';
import type { Intake, IntakeResult } from './ingest.js';
import { summarise } from './ingest.js';
import { MAX_PAYLOAD_BYTES } from './payload.js';

/**
 * The inbox folder source. A file is read once it is complete: written
 * elsewhere and renamed into place, or unchanged for `settleMs`. After its
 * notices are stored it moves to processed/ (every notice accepted or a
 * duplicate), or to rejected/ (every notice rejected) with `<name>.reasons.json`
 * beside it; a file with both goes to processed/ with the reasons file too.
 * A file larger than MAX_PAYLOAD_BYTES is rejected unread. A file whose
 * reading fails (an error, or the process stopping while it read it) is tried
 * again at the next scan; after MAX_FILE_ATTEMPTS it moves to rejected/ with
 * `<name>.error.json`, so it never holds up the files behind it. A file is
 * never deleted.
 */

/** Attempts at reading one inbox file before it is moved to rejected/ with its error. */
export const MAX_FILE_ATTEMPTS = 2;

/** Where attempts at inbox files are counted (the source store: it survives a crash while reading). */
export type InboxLedger = Pick<SourceStore, 'beginInboxAttempt' | 'failInboxAttempt' | 'endInboxAttempts' | 'forgetInboxAttemptsExcept'>;

export const INBOX_EXTENSIONS = ['.json', '.ndjson'] as const;
const SEED_MARKER = '.seeded';

export interface InboxFileOutcome {
  file: string;
  /** Where the file went, or null when it stays for another attempt. */
  movedTo: string | null;
  results: IntakeResult[];
  /** Set when reading it failed: the error, and the attempts so far. */
  failure?: { error: string; attempts: number };
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

function fileAway(inboxPath: string, name: string, results: IntakeResult[], now: Date): string {
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
  renameSync(join(inboxPath, name), target);
  return join(folder, basename(target));
}

/** Moves a file that failed MAX_FILE_ATTEMPTS times to rejected/, with the error beside it. */
function giveUp(inboxPath: string, name: string, error: string, attempts: number, now: Date): string {
  const target = uniqueTarget(join(inboxPath, 'rejected'), name, now);
  writeFileSync(`${target}.error.json`, `${JSON.stringify({ file: name, attempts, error, movedAt: now.toISOString() }, null, 2)}\n`);
  renameSync(join(inboxPath, name), target);
  return join('rejected', basename(target));
}

/** Stores the notices of one file, calls `stored`, and files it away; throws when something fails. */
function readOne(intake: Intake, inboxPath: string, name: string, now: Date, stored: () => void): InboxFileOutcome {
  const path = join(inboxPath, name);
  const source = `inbox:${name}`;
  const size = statSync(path).size;
  let results: IntakeResult[];
  if (size > MAX_PAYLOAD_BYTES) {
    // Not read: the file itself stays in rejected/.
    results = [intake.refuse(`(inbox file ${name}, ${size} bytes, not read)`, [{ path: '(body)', message: `file of ${size} bytes; at most ${MAX_PAYLOAD_BYTES} are read` }], source)];
  } else {
    const bytes = readFileSync(path);
    results = extname(name) === '.ndjson' ? intake.ingestNdjson(bytes, source) : intake.ingestJson(bytes, source);
  }
  // Its notices are stored: a stop from here on re-reads it at most, which the idempotency key makes harmless.
  stored();
  return { file: name, movedTo: fileAway(inboxPath, name, results, now), results };
}

/**
 * Reads, stores and files away every ready file. Never throws for one file's
 * sake: a file that fails is counted in `ledger` and tried again, then moved
 * to rejected/ with its error; the files behind it are read meanwhile.
 */
export function processInbox(intake: Intake, inboxPath: string, now: Date, settleMs: number, ledger: InboxLedger): InboxFileOutcome[] {
  ensureInboxFolders(inboxPath);
  const outcomes: InboxFileOutcome[] = [];
  const ready = readyInboxFiles(inboxPath, now, settleMs);
  ledger.forgetInboxAttemptsExcept(ready);
  for (const name of ready) {
    const attempt = ledger.beginInboxAttempt(name, now);
    if (attempt.attempts > MAX_FILE_ATTEMPTS) {
      // Earlier attempts ended without a word: the process stopped while reading it.
      const error = attempt.lastError ?? `the service stopped while reading it, ${attempt.attempts - 1} times`;
      outcomes.push({ file: name, movedTo: giveUp(inboxPath, name, error, attempt.attempts - 1, now), results: [], failure: { error, attempts: attempt.attempts - 1 } });
      ledger.endInboxAttempts(name);
      continue;
    }
    try {
      outcomes.push(readOne(intake, inboxPath, name, now, () => ledger.endInboxAttempts(name)));
    } catch (err) {
      const error = err instanceof Error ? err.message : String(err);
      ledger.failInboxAttempt(name, error, now);
      let movedTo: string | null = null;
      if (attempt.attempts >= MAX_FILE_ATTEMPTS) {
        try {
          movedTo = giveUp(inboxPath, name, error, attempt.attempts, now);
          ledger.endInboxAttempts(name);
        } catch {
          // The folder itself refuses writes: the file stays, and the failure shows in /readyz.
        }
      }
      outcomes.push({ file: name, movedTo, results: [], failure: { error, attempts: attempt.attempts } });
    }
  }
  return outcomes;
}
