import { NOTICE_SCHEMA_PATH, noticeJsonSchema } from '../../intake/notice-json-schema.js';
import { document, type ApiApp } from '../http.js';

/** Published formats: the notice format v1 as JSON Schema, for feeders to check what they send. */
export function schemaRoutes(app: ApiApp): void {
  const text = `${JSON.stringify(noticeJsonSchema(), null, 2)}\n`;
  app.route({
    method: 'GET',
    url: NOTICE_SCHEMA_PATH,
    config: { access: { role: null } },
    schema: {
      tags: ['notices'],
      summary: 'The notice format v1 as JSON Schema (draft 2020-12)',
      description:
        'Generated from the schema intake validates with; the same document is docs/notice.schema.json. Rules that need more than one field or the clock are listed in its description and checked by intake.',
      response: { 200: document('the JSON Schema', 'application/schema+json') },
    },
    handler: async (_request, reply) => reply.type('application/schema+json; charset=utf-8').header('cache-control', 'public, max-age=3600').send(text),
  });
}
