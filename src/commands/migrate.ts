import { existsSync } from 'node:fs';
import { dirname } from 'node:path';
import { loadConfig, MIGRATIONS_DIR } from '../config/load.js';
import { openDatabase } from '../store/database.js';
import { migrate } from '../store/migrations.js';
import { parseCommandArgs } from './args.js';
import type { CommandMain } from './io.js';
import { UsageError } from './io.js';

export const HELP = `nightjar migrate [--config FILE] [--db PATH]

Applies pending migrations (migrations/NNNN_name.sql, in order) to the database
and prints what it applied. A changed or missing applied migration is refused.
--db PATH (a database in an existing folder) stands in for the configured one.`;

export const main: CommandMain = async (argv, io) => {
  const parsed = parseCommandArgs(argv, { config: { type: 'string' }, db: { type: 'string' } }, HELP, io);
  if (parsed === null) return 0;
  const values = parsed;
  const config = loadConfig({ path: values.config, env: values.db ? { ...io.env, NIGHTJAR_DB: values.db } : io.env, cwd: io.cwd });
  // A path given on the command line is taken as meant: a missing folder is more likely a typo than a wish.
  const folder = dirname(config.service.databasePath);
  if (values.db !== undefined && values.db !== ':memory:' && !existsSync(folder)) {
    throw new UsageError(`--db ${values.db}: the folder ${folder} does not exist; create it first (mkdir -p ${folder}) or give a path in an existing folder`);
  }
  const db = openDatabase(config.service.databasePath);
  try {
    const applied = migrate(db, MIGRATIONS_DIR);
    io.stdout(
      applied.length === 0
        ? `${config.service.databasePath}: up to date\n`
        : applied.map((m) => `applied ${String(m.version).padStart(4, '0')}_${m.name}.sql\n`).join(''),
    );
    return 0;
  } finally {
    db.close();
  }
};
