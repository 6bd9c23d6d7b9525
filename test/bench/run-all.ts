/**
 * `npm run bench`: the service benchmark (four figures of docs/performance.md).
 * The module benchmarks beside it run on their own: npx tsx test/bench/<name>.bench.ts
 */
await import('./service.bench.js');
