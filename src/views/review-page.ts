import { esc, num } from './markup.js';
import { clockTime, dayTime, decDms, maybe, pageDocument, raHms } from './page-parts.js';
import { durationWords, KIND_WORDS } from './words.js';

/**
 * The review page: per site, tonight's timeline and the queue (target, altitude and airmass at
 * the recommended start, duration, 1-sigma major axis, score), then the objects without a
 * request there and why. Server-rendered HTML without scripts, semantic tables and headings,
 * so it reads in order without its stylesheet.
 */

export interface ReviewRequest {
  id: string;
  objectId: string;
  kind: string;
  state: string;
  score: number;
  windowStartUtc: string;
  windowEndUtc: string;
  recommendedStartUtc: string;
  durationS: number | null;
  raDeg: number | null;
  decDeg: number | null;
  altDegAtStart: number | null;
  airmassAtStart: number | null;
  /** 1-sigma semi-major axis at the recommended start, arcsec. */
  uncMajorArcsec: number | null;
  vMag: number | null;
  objectPageUrl: string;
  pointingUrl: string;
  requestJsonUrl: string;
}

export interface ObjectWithoutRequest {
  objectId: string;
  objectPageUrl: string;
  /** Why there is no request at this site, in words and numbers. */
  reasons: string[];
}

export interface ReviewSite {
  id: string;
  name: string;
  latDeg: number;
  lonDeg: number;
  localDate: string;
  tonightUrl: string;
  queueJsonUrl: string;
  requests: ReviewRequest[];
  withoutRequests: ObjectWithoutRequest[];
}

export interface ReviewPageInput {
  title: string;
  nowUtc: Date;
  sites: ReviewSite[];
  /** Objects no longer planned (no window anywhere in the horizon, or retracted), with the reason. */
  setAside: { objectId: string; objectPageUrl: string; state: string; reason: string }[];
  cautions: readonly string[];
  links: { href: string; text: string }[];
}

function requestRow(r: ReviewRequest): string {
  return `<tr class="state-${esc(r.state)}" data-request-id="${esc(r.id)}">
<td><a href="${esc(r.objectPageUrl)}">${esc(r.objectId)}</a></td>
<td>${esc(KIND_WORDS[r.kind] ?? r.kind)}${r.state === 'leased' ? ' (leased)' : ''}</td>
<td class="num">${esc(num(r.score, 1))}</td>
<td>${esc(dayTime(r.recommendedStartUtc))}</td>
<td class="num">${r.durationS === null ? '–' : esc(durationWords(r.durationS))}</td>
<td>${esc(clockTime(r.windowStartUtc))}–${esc(clockTime(r.windowEndUtc))}</td>
<td class="num">${r.raDeg === null ? '–' : esc(raHms(r.raDeg))}</td>
<td class="num">${r.decDeg === null ? '–' : esc(decDms(r.decDeg))}</td>
<td class="num">${esc(maybe(r.altDegAtStart, 1))}</td>
<td class="num">${esc(maybe(r.airmassAtStart, 2))}</td>
<td class="num">${esc(maybe(r.uncMajorArcsec, 1))}</td>
<td class="num">${esc(maybe(r.vMag, 1))}</td>
<td><a href="${esc(r.pointingUrl)}">where to point</a> · <a href="${esc(r.requestJsonUrl)}">JSON</a></td>
</tr>`;
}

function siteSection(site: ReviewSite): string {
  const table =
    site.requests.length === 0
      ? `<p>No queued or leased requests at this site.</p>`
      : `<table class="queue">
<caption>Queue at ${esc(site.name)}, best score first. Times UTC; RA (h m s) and Dec (° ′ ″) astrometric ICRS at the recommended start; altitude in degrees; 1σ: semi-major axis of the uncertainty ellipse, arcsec; V magnitude.</caption>
<thead><tr><th scope="col">Object</th><th scope="col">Request</th><th scope="col" class="num">Score</th><th scope="col">Start (UTC)</th><th scope="col" class="num">Duration</th><th scope="col">Window</th><th scope="col" class="num">RA</th><th scope="col" class="num">Dec</th><th scope="col" class="num">Altitude</th><th scope="col" class="num">Airmass</th><th scope="col" class="num">1σ ″</th><th scope="col" class="num">V</th><th scope="col">Links</th></tr></thead>
<tbody>
${site.requests.map(requestRow).join('\n')}
</tbody>
</table>`;
  const without =
    site.withoutRequests.length === 0
      ? '<p>Every active object has a request here.</p>'
      : `<ul class="reasons">
${site.withoutRequests
  .map((o) => `<li><a href="${esc(o.objectPageUrl)}">${esc(o.objectId)}</a>: ${o.reasons.length === 0 ? 'no reason recorded' : o.reasons.map(esc).join('; ')}</li>`)
  .join('\n')}
</ul>`;
  return `<section id="site-${esc(site.id)}">
<h2>${esc(site.name)}</h2>
<p>Site <code>${esc(site.id)}</code>, latitude ${esc(num(site.latDeg, 2))}°, longitude ${esc(num(site.lonDeg, 2))}° east. Night of ${esc(site.localDate)}. <a href="${esc(site.queueJsonUrl)}">Queue as JSON</a>.</p>
<figure>
<a href="${esc(site.tonightUrl)}"><img src="${esc(site.tonightUrl)}" alt="${esc(`Tonight at ${site.name} as a timeline: one row per object with requests, best score first, its observable windows and requests against UTC and local time, with the site's limits`)}"></a>
<figcaption>Tonight at ${esc(site.name)}: each object’s observable windows (the line inside is its altitude) and its requests’ recommended start and duration; the limit that closes a window at its end.</figcaption>
</figure>
${table}
<h3>Without a request at ${esc(site.name)}</h3>
${without}
</section>`;
}

/** The whole page. */
export function renderReviewPage(input: ReviewPageInput): string {
  const setAside =
    input.setAside.length === 0
      ? ''
      : `<section id="set-aside">
<h2>Set aside</h2>
<p>Objects no longer planned at any site, with the reason.</p>
<ul class="reasons">
${input.setAside.map((o) => `<li><a href="${esc(o.objectPageUrl)}">${esc(o.objectId)}</a> (${esc(o.state)}): ${esc(o.reason)}</li>`).join('\n')}
</ul>
</section>`;
  return pageDocument({
    title: `${input.title}: tonight's requests`,
    heading: `${input.title}: tonight's requests`,
    intro: `<p>Page made at ${esc(input.nowUtc.toISOString())}. Sites: ${input.sites.map((s) => `<a href="#site-${esc(s.id)}">${esc(s.name)}</a>`).join(', ')}.</p>
<p>${input.links.map((l) => `<a href="${esc(l.href)}">${esc(l.text)}</a>`).join(' · ')}</p>`,
    cautions: input.cautions,
    main: `${input.sites.map(siteSection).join('\n')}\n${setAside}`,
  });
}
