import { describe, expect, it } from 'vitest';
import { announce } from '../../src/jobs/webhooks.js';
import { buildTestApp, DEMO_TOKENS, demoConfig } from '../helpers.js';

describe('GET /v1/deliveries', () => {
  it('lists outbox deliveries with their payload and attempts', async () => {
    const config = demoConfig((raw) => {
      (raw['service'] as Record<string, unknown>)['webhooks'] = [{ id: 'desk', url: 'http://127.0.0.1:1/x', secret: 'sixteen-chars-or-more', minScore: 10 }];
    });
    const { app, store, clock } = await buildTestApp({ config });
    try {
      announce(store, config.service.webhooks, clock(), {
        event: 'object.retracted',
        objectId: 'ZX27A01',
        reason: 'false detection',
        withdrawn: ['rq_a'],
      });
      const res = await app.inject({ url: '/v1/deliveries', headers: { authorization: `Bearer ${DEMO_TOKENS.operator}` } });
      expect(res.statusCode).toBe(200);
      expect(res.json().items[0]).toMatchObject({ hookId: 'desk', event: 'object.retracted', state: 'pending', attempts: 0, payload: { reason: 'false detection' }, attemptLog: [] });
    } finally {
      await app.close();
    }
  });
});
