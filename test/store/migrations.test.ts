import { cpSync, writeFileSync, appendFileSync, rmSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import { openDatabase } from '../../src/store/database.js';
import { appliedMigrations, migrate, MigrationError } from '../../src/store/migrations.js';
import { tempDir } from '../helpers.js';

function copyOfMigrations(): string {
  const dir = join(tempDir(), 'migrations');
  cpSync(MIGRATIONS_DIR, dir, { recursive: true });
  return dir;
}

describe('migrations', () => {
  it('apply every file in order and record each with a checksum', () => {
    const db = openDatabase(':memory:');
    const applied = migrate(db, MIGRATIONS_DIR);
    const files = readdirSync(MIGRATIONS_DIR).filter((f) => f.endsWith('.sql'));
    expect(applied.map((m) => m.version)).toEqual(files.map((f) => Number(f.slice(0, 4))));
    const ledger = appliedMigrations(db);
    expect(ledger).toHaveLength(files.length);
    expect(ledger[0]!.checksum).toMatch(/^[0-9a-f]{64}$/);
  });

  it('create the backbone tables', () => {
    const db = openDatabase(':memory:');
    migrate(db, MIGRATIONS_DIR);
    const tables = (db.prepare("SELECT name FROM sqlite_master WHERE type = 'table'").all() as { name: string }[]).map((t) => t.name);
    for (const t of ['notices', 'rejections', 'objects', 'observations', 'work', 'source_state', 'schema_migrations']) expect(tables).toContain(t);
  });

  it('apply nothing the second time', () => {
    const db = openDatabase(':memory:');
    migrate(db, MIGRATIONS_DIR);
    expect(migrate(db, MIGRATIONS_DIR)).toEqual([]);
  });

  it('apply a new file added later, leaving the applied ones alone', () => {
    const dir = copyOfMigrations();
    const db = openDatabase(':memory:');
    migrate(db, dir);
    writeFileSync(join(dir, '0900_extra_table.sql'), 'CREATE TABLE extra (id INTEGER PRIMARY KEY);');
    expect(migrate(db, dir).map((m) => m.name)).toEqual(['extra_table']);
  });

  it('refuse to start when an applied file has changed', () => {
    const dir = copyOfMigrations();
    const db = openDatabase(':memory:');
    migrate(db, dir);
    appendFileSync(join(dir, '0001_backbone.sql'), '\n-- edited after the fact\n');
    expect(() => migrate(db, dir)).toThrow(MigrationError);
    expect(() => migrate(db, dir)).toThrow(/0001_backbone\.sql has changed since it was applied/);
  });

  it('refuse to start when an applied file is missing', () => {
    const dir = copyOfMigrations();
    const db = openDatabase(':memory:');
    writeFileSync(join(dir, '0900_extra_table.sql'), 'CREATE TABLE extra (id INTEGER PRIMARY KEY);');
    migrate(db, dir);
    rmSync(join(dir, '0900_extra_table.sql'));
    expect(() => migrate(db, dir)).toThrow(/0900_extra_table\.sql was applied to this database but is missing/);
  });

  it('refuse a badly named file instead of skipping it', () => {
    const dir = copyOfMigrations();
    writeFileSync(join(dir, '2_oops.sql'), 'SELECT 1;');
    expect(() => migrate(openDatabase(':memory:'), dir)).toThrow(/2_oops\.sql: name must be NNNN_name\.sql/);
  });

  it('leave nothing behind when a migration fails half-way', () => {
    const dir = copyOfMigrations();
    const db = openDatabase(':memory:');
    migrate(db, dir);
    writeFileSync(join(dir, '0900_broken.sql'), 'CREATE TABLE half (id INTEGER); INSERT INTO nowhere VALUES (1);');
    expect(() => migrate(db, dir)).toThrow();
    const half = db.prepare("SELECT count(*) AS n FROM sqlite_master WHERE name = 'half'").get() as { n: number };
    expect(half.n).toBe(0);
    expect(appliedMigrations(db).some((m) => m.name === 'broken')).toBe(false);
  });
});
