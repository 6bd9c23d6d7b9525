import type { EstimateFacts } from './assessment-summary.js';
import { esc, num } from './markup.js';
import { clockTime, dayTime, decDms, maybe, pageDocument, raHms } from './page-parts.js';
import { durationWords, KIND_WORDS } from './words.js';

/**
 * A page per object: what the latest assessment estimates (range, orbit classes, H and size,
 * close approach), where to point from each site with a request, every site's requests with
 * their history, and why a site has none. Server-rendered HTML without scripts.
 */

export interface ObjectRequestView {
  id: string;
  kind: string;
  state: string;
  score: number;
  /** 1 when proposed; each replan that changed it in place adds one. */
  revision: number;
  /** Every revision, first to last, with the fields it changed (none for the first). */
  revisions: { revision: number; at: string; changed: string[] }[];
  windowStartUtc: string;
  windowEndUtc: string;
  recommendedStartUtc: string;
  durationS: number | null;
  createdAt: string;
  updatedAt: string;
  stateReason: string | null;
  supersededBy: string | null;
  history: { at: string; from: string | null; to: string; detail: string | null }[];
  jsonUrl: string;
}

export interface ObjectSiteView {
  id: string;
  name: string;
  requests: ObjectRequestView[];
  /** Observable windows in the latest assessment's horizon. */
  windows: { startUtc: string; endUtc: string; closesBecause: string }[];
  /** Why a request kind is missing here (or why there is none), from the latest assessment. */
  reasons: string[];
  /** The pointing picture, or why there is none. */
  pointing: { url: string; alt: string } | { missing: string };
}

export interface ObjectPageInput {
  title: string;
  objectId: string;
  state: string;
  /** Why the object is retired or retracted. */
  stateReason: string | null;
  firstNoticeAt: string;
  lastNoticeAt: string;
  tracklet: { t: string; raDeg: number; decDeg: number; sigmaArcsec: number; mag: number | null; band: string | null }[];
  assessedAt: string | null;
  estimate: EstimateFacts | null;
  sites: ObjectSiteView[];
  cautions: readonly string[];
  links: { href: string; text: string }[];
}

const pct = (x: number) => `${Math.round(x * 100)} %`;
const range3 = (p: { p5: number; p50: number; p95: number }, digits: number, unit: string) => `${num(p.p50, digits)}${unit} (5–95 %: ${num(p.p5, digits)}–${num(p.p95, digits)}${unit})`;

function estimateSection(input: ObjectPageInput): string {
  const e = input.estimate;
  if (!e) {
    return `<section id="estimate"><h2>Estimate</h2><p>${input.assessedAt ? 'The latest assessment holds no estimate summary.' : 'Not assessed yet.'}</p></section>`;
  }
  const rows: [string, string][] = [
    ['Method', `${e.method === 'ranging' ? 'short-arc ranging over distance and range-rate' : e.method === 'orbit-block' ? 'the orbit given in the notice, with virtual orbits around it' : e.method}; ${e.members} virtual orbits`],
    ['Distance from the observer', e.rangeAu ? `${range3(e.rangeAu, 4, ' au')} at the tracklet’s mean time` : 'unknown'],
    [
      'Orbit classes',
      e.classFractions
        ? `${e.classFractions.nearEarth === null ? '–' : pct(e.classFractions.nearEarth)} near-Earth (q < 1.3 au) · ${pct(e.classFractions.mainBelt)} main-belt-like · ${pct(e.classFractions.other)} other`
        : 'unknown',
    ],
    ['Absolute magnitude H', e.hMag ? range3(e.hMag, 1, '') : 'unknown (no magnitudes)'],
    ['Size', e.diameterM ? `${num(e.diameterM.min, 0)}–${num(e.diameterM.max, 0)} m across (albedo 0.25 to 0.05 at the median H)` : 'unknown'],
    [
      'Closest approach',
      e.minGeocentricDistance
        ? `${range3(e.minGeocentricDistance.lunarDistances, 1, ' lunar distances')} within ${num(e.minGeocentricDistance.withinDays, 0)} days (${num(e.minGeocentricDistance.au.p50, 4)} au)${e.closeApproach ? ': a close approach (not a hazard statement)' : ''}`
        : 'unknown',
    ],
    ['Residuals', e.rmsArcsec === null ? '–' : `${num(e.rmsArcsec, 2)}″ rms`],
  ];
  return `<section id="estimate">
<h2>Estimate</h2>
<p>From the assessment of ${esc(input.assessedAt ? dayTime(input.assessedAt) : '–')} UTC. An estimate from a short arc, with its spread; not an impact prediction.</p>
<dl class="facts">
${rows.map(([k, v]) => `<dt>${esc(k)}</dt><dd>${esc(v)}</dd>`).join('\n')}
</dl>
${e.notes.length > 0 ? `<ul>${e.notes.map((n) => `<li>${esc(n)}</li>`).join('')}</ul>` : ''}
</section>`;
}

function historyList(r: ObjectRequestView): string {
  const states = r.history.map((h) => ({ at: h.at, words: `${h.from ?? 'new'} → ${h.to}${h.detail ? ` (${h.detail})` : ''}` }));
  const revisions = r.revisions
    .filter((v) => v.revision > 1)
    .map((v) => ({ at: v.at, words: `revision ${v.revision}: ${v.changed.length > 0 ? `changed ${v.changed.join(', ')}` : 'no field changed'}` }));
  const events = [...states, ...revisions].sort((a, b) => a.at.localeCompare(b.at));
  if (events.length === 0) return '';
  return `<details><summary>history (${events.length})</summary><ol>${events.map((e) => `<li>${esc(dayTime(e.at))}: ${esc(e.words)}</li>`).join('')}</ol></details>`;
}

function siteSection(site: ObjectSiteView): string {
  const picture =
    'url' in site.pointing
      ? `<figure><a href="${esc(site.pointing.url)}"><img src="${esc(site.pointing.url)}" alt="${esc(site.pointing.alt)}"></a><figcaption>Where to point from ${esc(site.name)}: the uncertainty region as the density of the virtual orbits, the imager field, the slit and the motion.</figcaption></figure>`
      : `<p class="muted">No pointing picture from here: ${esc(site.pointing.missing)}.</p>`;
  const requests =
    site.requests.length === 0
      ? '<p>No requests at this site.</p>'
      : `<table class="requests">
<caption>Requests at ${esc(site.name)}, open ones first. Times UTC.</caption>
<thead><tr><th scope="col">Request</th><th scope="col">State</th><th scope="col" class="num">Score</th><th scope="col">Start</th><th scope="col" class="num">Duration</th><th scope="col">Window</th><th scope="col">Made · changed</th><th scope="col">Why in this state · history</th></tr></thead>
<tbody>
${site.requests
  .map(
    (r) => `<tr data-request-id="${esc(r.id)}">
<td><a href="${esc(r.jsonUrl)}">${esc(KIND_WORDS[r.kind] ?? r.kind)}</a>${r.revision > 1 ? ` (revision ${esc(String(r.revision))})` : ''}</td>
<td>${esc(r.state)}${r.supersededBy ? ` by <code>${esc(r.supersededBy)}</code>` : ''}</td>
<td class="num">${esc(num(r.score, 1))}</td>
<td>${esc(dayTime(r.recommendedStartUtc))}</td>
<td class="num">${r.durationS === null ? '–' : esc(durationWords(r.durationS))}</td>
<td>${esc(clockTime(r.windowStartUtc))}–${esc(clockTime(r.windowEndUtc))}</td>
<td>${esc(dayTime(r.createdAt))} · ${esc(dayTime(r.updatedAt))}</td>
<td>${r.stateReason ? esc(r.stateReason) : ''}${historyList(r)}</td>
</tr>`,
  )
  .join('\n')}
</tbody>
</table>`;
  const windows =
    site.windows.length === 0
      ? ''
      : `<p>Observable windows: ${site.windows.map((w) => `${esc(dayTime(w.startUtc))}–${esc(clockTime(w.endUtc))} (closes: ${esc(w.closesBecause)})`).join('; ')}.</p>`;
  const reasons = site.reasons.length === 0 ? '' : `<p>Why not more here:</p><ul class="reasons">${site.reasons.map((x) => `<li>${esc(x)}</li>`).join('')}</ul>`;
  return `<section id="site-${esc(site.id)}">
<h2>${esc(site.name)}</h2>
${windows}
${requests}
${reasons}
${picture}
</section>`;
}

function trackletSection(input: ObjectPageInput): string {
  if (input.tracklet.length === 0) return '';
  return `<section id="tracklet">
<h2>Tracklet</h2>
<table>
<caption>${input.tracklet.length} positions (astrometric ICRS as observed; σ per axis).</caption>
<thead><tr><th scope="col">Time (UTC)</th><th scope="col" class="num">RA</th><th scope="col" class="num">Dec</th><th scope="col" class="num">σ ″</th><th scope="col" class="num">Magnitude</th></tr></thead>
<tbody>
${input.tracklet
  .map((o) => `<tr><td>${esc(o.t)}</td><td class="num">${esc(raHms(o.raDeg))}</td><td class="num">${esc(decDms(o.decDeg))}</td><td class="num">${esc(num(o.sigmaArcsec, 2))}</td><td class="num">${esc(maybe(o.mag, 2))}${o.mag !== null ? ` ${esc(o.band ?? 'V')}` : ''}</td></tr>`)
  .join('\n')}
</tbody>
</table>
</section>`;
}

/** The whole page. */
export function renderObjectPage(input: ObjectPageInput): string {
  return pageDocument({
    title: `${input.objectId}: ${input.title}`,
    heading: input.objectId,
    intro: `<p>State: ${esc(input.state)}${input.stateReason ? ` (${esc(input.stateReason)})` : ''}. First notice ${esc(dayTime(input.firstNoticeAt))} UTC, latest ${esc(dayTime(input.lastNoticeAt))} UTC.</p>
<p>${input.links.map((l) => `<a href="${esc(l.href)}">${esc(l.text)}</a>`).join(' · ')}</p>`,
    cautions: input.cautions,
    main: [estimateSection(input), ...input.sites.map(siteSection), trackletSection(input)].join('\n'),
  });
}
