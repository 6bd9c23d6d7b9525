import { createHash } from 'node:crypto';
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Db } from './database.js';

/** A migration file on disk: `NNNN_name.sql`. */
export interface MigrationFile {
  version: number;
  name: string;
  sql: string;
  checksum: string;
}

/** Applying migrations was refused; `message` says which file and what to do. */
export class MigrationError extends Error {
  override readonly name = 'MigrationError';
}

const FILE_PATTERN = /^(\d{4})_([a-z0-9_]+)\.sql$/;

export function checksumOf(sql: string): string {
  return createHash('sha256').update(sql).digest('hex');
}

/** Reads `dir` for migration files in version order; other files are an error, so a typo is not skipped silently. */
export function readMigrationFiles(dir: string): MigrationFile[] {
  const files = readdirSync(dir).filter((f) => !f.startsWith('.')).sort();
  const out: MigrationFile[] = [];
  for (const file of files) {
    const m = FILE_PATTERN.exec(file);
    if (!m) throw new MigrationError(`migrations/${file}: name must be NNNN_name.sql (lower-case name)`);
    const sql = readFileSync(join(dir, file), 'utf8');
    const version = Number(m[1]);
    if (out.some((x) => x.version === version)) throw new MigrationError(`migrations/${file}: version ${m[1]} is used twice`);
    out.push({ version, name: m[2]!, sql, checksum: checksumOf(sql) });
  }
  return out;
}

interface AppliedRow {
  version: number;
  name: string;
  checksum: string;
  applied_at: string;
}

function ensureLedger(db: Db): void {
  db.exec(`CREATE TABLE IF NOT EXISTS schema_migrations (
    version INTEGER PRIMARY KEY, name TEXT NOT NULL, checksum TEXT NOT NULL, applied_at TEXT NOT NULL)`);
}

export function appliedMigrations(db: Db): AppliedRow[] {
  ensureLedger(db);
  return db.prepare('SELECT version, name, checksum, applied_at FROM schema_migrations ORDER BY version').all() as AppliedRow[];
}

/** Checks applied migrations against the files: a changed or missing applied file is refused. Returns the pending ones. */
export function pendingMigrations(db: Db, files: MigrationFile[]): MigrationFile[] {
  const applied = appliedMigrations(db);
  for (const row of applied) {
    const file = files.find((f) => f.version === row.version);
    const label = `${String(row.version).padStart(4, '0')}_${row.name}.sql`;
    if (!file)
      throw new MigrationError(
        `migration ${label} was applied to this database but is missing from migrations/; restore the file (migrations are forward-only)`,
      );
    if (file.checksum !== row.checksum)
      throw new MigrationError(
        `migration ${label} has changed since it was applied (checksum ${row.checksum.slice(0, 12)}… now ${file.checksum.slice(0, 12)}…); restore the original and put the change in a new migration`,
      );
  }
  const last = applied.length > 0 ? applied[applied.length - 1]!.version : 0;
  const pending = files.filter((f) => !applied.some((a) => a.version === f.version));
  const early = pending.find((f) => f.version < last);
  if (early)
    throw new MigrationError(
      `migration ${String(early.version).padStart(4, '0')}_${early.name}.sql is older than the last applied (${last}); give it a higher number`,
    );
  return pending;
}

/** Applies pending migrations in order, each in its own transaction together with its ledger row. */
export function migrate(db: Db, dir: string, now: () => Date = () => new Date()): MigrationFile[] {
  const files = readMigrationFiles(dir);
  const pending = pendingMigrations(db, files);
  const record = db.prepare('INSERT INTO schema_migrations (version, name, checksum, applied_at) VALUES (?, ?, ?, ?)');
  for (const file of pending) {
    db.transaction(() => {
      db.exec(file.sql);
      record.run(file.version, file.name, file.checksum, now().toISOString());
    })();
  }
  return pending;
}

/** True when every file on disk is applied and unchanged (for /readyz). */
export function migrationsCurrent(db: Db, dir: string): { ok: boolean; detail: string } {
  try {
    const pending = pendingMigrations(db, readMigrationFiles(dir));
    return pending.length === 0
      ? { ok: true, detail: 'all applied' }
      : { ok: false, detail: `${pending.length} pending: ${pending.map((p) => p.name).join(', ')}` };
  } catch (err) {
    return { ok: false, detail: (err as Error).message };
  }
}
