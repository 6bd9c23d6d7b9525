import { openDatabase, type Db } from './database.js';
import { migrate } from './migrations.js';
import { createNoticeStore } from './notices.js';
import { createDeliveryStore } from './deliveries.js';
import { createObjectStore } from './objects.js';
import { createRequestStore } from './requests.js';
import { createSourceStore } from './sources.js';
import { createWorkStore } from './work.js';
import { createKeptEstimateStore } from './kept-estimates.js';

/** All repositories over one database handle. */
export function createStore(db: Db) {
  return {
    db,
    notices: createNoticeStore(db),
    objects: createObjectStore(db),
    work: createWorkStore(db),
    requests: createRequestStore(db),
    deliveries: createDeliveryStore(db),
    sources: createSourceStore(db),
    keptEstimates: createKeptEstimateStore(db),
  };
}

export type Store = ReturnType<typeof createStore>;

/** Opens the database at `path`, applies pending migrations from `migrationsDir`, and returns the store. */
export function openStore(path: string, migrationsDir: string, now: () => Date = () => new Date()): Store {
  const db = openDatabase(path);
  try {
    migrate(db, migrationsDir, now);
  } catch (err) {
    db.close();
    throw err;
  }
  return createStore(db);
}
