import { esc, num } from './markup.js';

/**
 * The review page: a plain server-rendered HTML document (no scripts) listing each site's
 * open requests with links to the pictures and the JSON endpoints. Semantic tables and
 * headings, so it reads in order without its stylesheet.
 */

export interface HomeRequest {
  id: string;
  objectId: string;
  kind: string;
  state: string;
  score: number;
  windowStartUtc: string;
  windowEndUtc: string;
  recommendedStartUtc: string;
  /** arcsec/s, RA rate times cos Dec; null when the plan has none. */
  raRate: number | null;
  decRate: number | null;
  vMag: number | null;
  skyPictureUrl: string;
  requestJsonUrl: string;
  objectJsonUrl: string;
}

export interface HomeSite {
  id: string;
  name: string;
  latDeg: number;
  lonDeg: number;
  localDate: string;
  nightPictureUrl: string;
  queueJsonUrl: string;
  requests: HomeRequest[];
}

export interface HomePageInput {
  title: string;
  nowUtc: Date;
  sites: HomeSite[];
  cautions: readonly string[];
  /** Links to the service's own documents (API docs, OpenAPI). */
  links: { href: string; text: string }[];
}

const hhmm = (iso: string) => (Number.isFinite(Date.parse(iso)) ? `${iso.slice(0, 10)} ${iso.slice(11, 16)}` : iso);
const rate = (x: number | null) => (x === null ? '–' : num(x, 4));

function requestRow(r: HomeRequest): string {
  return `<tr>
<td><a href="${esc(r.objectJsonUrl)}">${esc(r.objectId)}</a></td>
<td>${esc(r.kind)}</td>
<td>${esc(r.state)}</td>
<td class="num">${esc(num(r.score, 1))}</td>
<td>${esc(hhmm(r.windowStartUtc))} – ${esc(r.windowEndUtc.slice(11, 16))}</td>
<td>${esc(hhmm(r.recommendedStartUtc))}</td>
<td class="num">${esc(rate(r.raRate))}</td>
<td class="num">${esc(rate(r.decRate))}</td>
<td class="num">${r.vMag === null ? '–' : esc(num(r.vMag, 1))}</td>
<td><a href="${esc(r.skyPictureUrl)}">sky picture</a> · <a href="${esc(r.requestJsonUrl)}">JSON</a></td>
</tr>`;
}

function siteSection(site: HomeSite): string {
  const top = site.requests[0];
  const table =
    site.requests.length === 0
      ? `<p>No queued or leased requests at this site.</p>`
      : `<table>
<caption>Open requests at ${esc(site.name)}, best score first (times UTC; rates in arcsec/s, RA rate times cos Dec; magnitude V)</caption>
<thead><tr><th scope="col">Object</th><th scope="col">Kind</th><th scope="col">State</th><th scope="col">Score</th><th scope="col">Window (UTC)</th><th scope="col">Recommended start</th><th scope="col">RA rate</th><th scope="col">Dec rate</th><th scope="col">V</th><th scope="col">Links</th></tr></thead>
<tbody>
${site.requests.map(requestRow).join('\n')}
</tbody>
</table>`;
  const topPicture = top
    ? `<figure>
<a href="${esc(top.skyPictureUrl)}"><img src="${esc(top.skyPictureUrl)}" width="940" height="600" alt="${esc(`${top.objectId} on the sky at the recommended start of its ${top.kind} request: uncertainty ellipses, imager field, slit and motion`)}"></a>
<figcaption>Best-scoring request: ${esc(top.objectId)} (${esc(top.kind)}, score ${esc(num(top.score, 1))}) on the sky at its recommended start ${esc(hhmm(top.recommendedStartUtc))} UTC.</figcaption>
</figure>`
    : '';
  return `<section id="site-${esc(site.id)}">
<h2>${esc(site.name)}</h2>
<p>Site <code>${esc(site.id)}</code>, latitude ${esc(num(site.latDeg, 2))}°, longitude ${esc(num(site.lonDeg, 2))}° east. Night of ${esc(site.localDate)} (local mean time).
Links: <a href="${esc(site.nightPictureUrl)}">night picture</a> · <a href="${esc(site.queueJsonUrl)}">queue as JSON</a></p>
<figure>
<a href="${esc(site.nightPictureUrl)}"><img src="${esc(site.nightPictureUrl)}" width="1000" height="560" alt="${esc(`Altitude against time for the night of ${site.localDate} at ${site.name}, with twilight, dark time, the Moon, the altitude limit and the open requests`)}"></a>
<figcaption>The night at ${esc(site.name)}: altitude of each object with open requests, windows as thick bars labelled by object, kind and score.</figcaption>
</figure>
${table}
${topPicture}
</section>`;
}

/** The whole page. */
export function renderHomePage(input: HomePageInput): string {
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>${esc(input.title)}: tonight's requests</title>
<style>
body{font-family:system-ui,sans-serif;max-width:64rem;margin:1.5rem auto;padding:0 1rem;line-height:1.4;color:#111}
table{border-collapse:collapse;width:100%;margin:.5rem 0 1rem}
caption{text-align:left;font-style:italic;padding:.25rem 0}
th,td{border:1px solid #bbb;padding:.2rem .4rem;text-align:left;vertical-align:top}
td.num{text-align:right;font-variant-numeric:tabular-nums}
img{max-width:100%;height:auto;border:1px solid #ccc}
section{border-top:2px solid #555;margin-top:1.5rem}
figure{margin:.5rem 0}
.cautions{background:#fff8e1;border:1px solid #e0c060;padding:.5rem 1rem}
</style>
</head>
<body>
<header>
<h1>${esc(input.title)}: tonight's requests</h1>
<p>Page made at ${esc(input.nowUtc.toISOString())}. Sites: ${input.sites.map((s) => `<a href="#site-${esc(s.id)}">${esc(s.name)}</a>`).join(', ')}.</p>
<p>${input.links.map((l) => `<a href="${esc(l.href)}">${esc(l.text)}</a>`).join(' · ')}</p>
</header>
<main>
<section class="cautions" aria-labelledby="cautions-heading">
<h2 id="cautions-heading">Cautions</h2>
<ul>
${input.cautions.map((c) => `<li>${esc(c)}</li>`).join('\n')}
</ul>
</section>
${input.sites.map(siteSection).join('\n')}
</main>
</body>
</html>
`;
}
