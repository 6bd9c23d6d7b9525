import { escapeUTF8 } from 'entities/escape';
import MarkdownIt from 'markdown-it';
import { z } from 'zod';
import { document, json, type ApiApp } from './http.js';

/**
 * The API's documentation: the OpenAPI document @fastify/swagger builds from the
 * routes' schemas, and a readable page of it, rendered on the server with no
 * scripts. Descriptions are Markdown, rendered by markdown-it with raw HTML
 * off (so a description can never become markup); every other text is
 * escaped by `entities` (& < > " ').
 */

export const CAUTIONS = [
  'nightjar proposes observations; the telescope’s interlocks and the observatory’s operators decide what is executed. Sun avoidance and the site’s hard limits are never overridden by a score.',
  'Positions, rates and magnitudes are estimates from short arcs of astrometry, with the uncertainty stated. They are not impact predictions; nightjar is not an impact-warning system. For hazard assessment use the official orbit-computation and planetary-defence channels.',
];

const markdown = new MarkdownIt({ html: false, linkify: false, typographer: false });
const esc = escapeUTF8;

interface Parameter {
  name: string;
  in: string;
  required?: boolean;
  description?: string;
  schema?: { type?: string | string[] };
}

interface Operation {
  summary?: string;
  description?: string;
  parameters?: Parameter[];
  requestBody?: { content?: Record<string, unknown> };
  responses?: Record<string, { description?: string; content?: Record<string, unknown> }>;
}

export interface OpenApiDocument {
  info: { title: string; version: string; description?: string };
  paths: Record<string, Record<string, Operation>>;
}

function typeOf(p: Parameter): string {
  const t = p.schema?.type;
  return Array.isArray(t) ? t.join(' or ') : (t ?? '');
}

/** The OpenAPI document as a readable HTML page (no scripts, no outside resources). */
export function renderDocsPage(doc: OpenApiDocument): string {
  const sections = Object.entries(doc.paths)
    .flatMap(([path, ops]) =>
      Object.entries(ops).map(([method, op]) => {
        const params = (op.parameters ?? [])
          .map((p) => {
            const facts = [p.in, p.required ? 'required' : '', typeOf(p)].filter(Boolean).join(', ');
            return `<li><code>${esc(p.name)}</code> (${esc(facts)})${p.description ? `: ${markdown.renderInline(p.description)}` : ''}</li>`;
          })
          .join('');
        const body = op.requestBody?.content ? `<h4>Body</h4><p>${Object.keys(op.requestBody.content).map((t) => `<code>${esc(t)}</code>`).join(', ')}</p>` : '';
        const answers = Object.entries(op.responses ?? {})
          .map(([code, r]) => {
            const types = Object.keys(r.content ?? {});
            return `<li><code>${esc(code)}</code> ${markdown.renderInline(r.description ?? '')}${types.length ? ` (${types.map((t) => `<code>${esc(t)}</code>`).join(', ')})` : ''}</li>`;
          })
          .join('');
        return `<section><h3><code>${esc(method.toUpperCase())} ${esc(path)}</code></h3>
<p>${markdown.renderInline(op.summary ?? '')}</p>
${markdown.render(op.description ?? '')}${params ? `<h4>Parameters</h4><ul>${params}</ul>` : ''}${body}<h4>Answers</h4><ul>${answers}</ul></section>`;
      }),
    )
    .join('\n');
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>${esc(doc.info.title)} API</title>
<style>body{font-family:system-ui,sans-serif;max-width:60rem;margin:2rem auto;padding:0 1rem;line-height:1.45}code{background:#f3f3f3;padding:0 .2em}section{border-top:1px solid #ccc;margin-top:1rem}</style></head>
<body><h1>${esc(doc.info.title)} API ${esc(doc.info.version)}</h1>
<h2>Cautions</h2><ul>${CAUTIONS.map((c) => `<li>${esc(c)}</li>`).join('')}</ul>
<p>Machine-readable: <a href="/v1/openapi.json">/v1/openapi.json</a> (OpenAPI 3.1); the notice format as JSON Schema: <a href="/v1/schemas/notice.json">/v1/schemas/notice.json</a>. Times are ISO-8601 UTC; angles in degrees; uncertainties in arcsec; rates in arcsec/s with the RA rate multiplied by cos(Dec). Errors: <code>{"error": {"code", "message", "details"}}</code>.</p>
<h2>Routes</h2>
${sections}
</body></html>`;
}

/** The two documentation routes: the OpenAPI document and its readable page. */
export function docRoutes(app: ApiApp): void {
  app.route({
    method: 'GET',
    url: '/v1/openapi.json',
    config: { access: { role: null } },
    schema: {
      tags: ['service'],
      summary: 'This API as an OpenAPI 3.1 document',
      response: { 200: json('the document', z.looseObject({ openapi: z.string(), paths: z.record(z.string(), z.unknown()) })) },
    },
    handler: async () => app.swagger() as unknown as { openapi: string; paths: Record<string, unknown> },
  });
  let page: string | null = null;
  app.route({
    method: 'GET',
    url: '/v1/docs',
    config: { access: { role: null } },
    schema: {
      tags: ['service'],
      summary: 'This API as a readable page, with the cautions (HTML, no scripts)',
      response: { 200: document('HTML', 'text/html') },
    },
    handler: async (_request, reply) => {
      page ??= renderDocsPage(app.swagger() as unknown as OpenApiDocument);
      return reply.type('text/html; charset=utf-8').header('content-security-policy', "default-src 'none'; style-src 'unsafe-inline'").send(page);
    },
  });
}
