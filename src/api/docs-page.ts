/** A readable, server-rendered page of the OpenAPI document (no scripts). */

const esc = (s: string) => s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');

export const CAUTIONS = [
  'nightjar proposes observations; the telescope’s interlocks and the observatory’s operators decide what is executed. Sun avoidance and the site’s hard limits are never overridden by a score.',
  'Positions, rates and magnitudes are estimates from short arcs of astrometry, with the uncertainty stated. They are not impact predictions; nightjar is not an impact-warning system. For hazard assessment use the official orbit-computation and planetary-defence channels.',
];

interface Operation {
  summary?: string;
  description?: string;
  parameters?: { name: string; in: string; required?: boolean; description?: string; schema?: { type?: string } }[];
  responses?: Record<string, { description: string }>;
}

export function renderDocsPage(doc: { info: { title: string; version: string }; paths: Record<string, Record<string, Operation>> }): string {
  const sections = Object.entries(doc.paths)
    .flatMap(([path, ops]) =>
      Object.entries(ops).map(([method, op]) => {
        const params = (op.parameters ?? [])
          .map((p) => `<li><code>${esc(p.name)}</code> (${esc(p.in)}${p.required ? ', required' : ''}${p.schema?.type ? `, ${esc(p.schema.type)}` : ''})${p.description ? `: ${esc(p.description)}` : ''}</li>`)
          .join('');
        const responses = Object.entries(op.responses ?? {})
          .map(([code, r]) => `<li><code>${esc(code)}</code> ${esc(r.description)}</li>`)
          .join('');
        return `<section><h3><code>${esc(method.toUpperCase())} ${esc(path)}</code></h3>
<p>${esc(op.summary ?? '')}</p>${(op.description ?? '')
          .split('\n\n')
          .map((p) => `<p>${esc(p)}</p>`)
          .join('')}
${params ? `<h4>Parameters</h4><ul>${params}</ul>` : ''}<h4>Answers</h4><ul>${responses}</ul></section>`;
      }),
    )
    .join('\n');
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>${esc(doc.info.title)} API</title>
<style>body{font-family:system-ui,sans-serif;max-width:60rem;margin:2rem auto;padding:0 1rem;line-height:1.45}code{background:#f3f3f3;padding:0 .2em}section{border-top:1px solid #ccc;margin-top:1rem}</style></head>
<body><h1>${esc(doc.info.title)} API ${esc(doc.info.version)}</h1>
<h2>Cautions</h2><ul>${CAUTIONS.map((c) => `<li>${esc(c)}</li>`).join('')}</ul>
<p>Machine-readable: <a href="/v1/openapi.json">/v1/openapi.json</a> (OpenAPI 3.1). Times are ISO-8601 UTC; angles in degrees; uncertainties in arcsec; rates in arcsec/s with the RA rate multiplied by cos(Dec). Errors: <code>{"error": {"code", "message", "details"}}</code>.</p>
<h2>Routes</h2>
${sections}
</body></html>`;
}
