import { esc, num } from './markup.js';

/** Pieces shared by the review pages: the document frame, times, coordinates and cautions. No scripts. */

export const PAGE_STYLE = `body{font-family:system-ui,sans-serif;max-width:84rem;margin:1.5rem auto;padding:0 1rem;line-height:1.4;color:#111}
table{border-collapse:collapse;width:100%;margin:.5rem 0 1rem;font-size:.92rem}
caption{text-align:left;font-style:italic;padding:.25rem 0}
th,td{border:1px solid #bbb;padding:.2rem .4rem;text-align:left;vertical-align:top}
td.num,th.num{text-align:right;font-variant-numeric:tabular-nums}
img{max-width:100%;height:auto;border:1px solid #ccc}
section{border-top:2px solid #555;margin-top:1.5rem}
figure{margin:.5rem 0}
dl.facts{display:grid;grid-template-columns:max-content 1fr;gap:.15rem 1rem}
dl.facts dt{font-weight:bold}
dl.facts dd{margin:0}
.cautions{background:#fff8e1;border:1px solid #e0c060;padding:.5rem 1rem}
.reasons li{margin:.15rem 0}
.state-leased{font-weight:bold}
.muted{color:#555}
details{margin:.1rem 0}`;

/** The HTML document around `main`, with the cautions first. */
export function pageDocument(options: { title: string; heading: string; intro: string; cautions: readonly string[]; main: string }): string {
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="referrer" content="no-referrer">
<title>${esc(options.title)}</title>
<style>
${PAGE_STYLE}
</style>
</head>
<body>
<header>
<h1>${esc(options.heading)}</h1>
${options.intro}
</header>
<main>
<section class="cautions" aria-labelledby="cautions-heading">
<h2 id="cautions-heading">Cautions</h2>
<ul>
${options.cautions.map((c) => `<li>${esc(c)}</li>`).join('\n')}
</ul>
</section>
${options.main}
</main>
</body>
</html>
`;
}

/** "2027-03-04 07:12" from an ISO UTC string (the input unchanged when it is not a time). */
export function dayTime(iso: string): string {
  return Number.isFinite(Date.parse(iso)) ? `${iso.slice(0, 10)} ${iso.slice(11, 16)}` : iso;
}

/** "07:12" from an ISO UTC string. */
export function clockTime(iso: string): string {
  return Number.isFinite(Date.parse(iso)) ? iso.slice(11, 16) : iso;
}

/** RA in hours as "10 00 48.0" (h m s). */
export function raHms(deg: number): string {
  const total = Math.round((((deg % 360) + 360) % 360) / 15 * 36000) % 864000;
  const h = Math.floor(total / 36000);
  const m = Math.floor((total % 36000) / 600);
  const s = (total % 600) / 10;
  return `${String(h).padStart(2, '0')} ${String(m).padStart(2, '0')} ${s.toFixed(1).padStart(4, '0')}`;
}

/** Dec as "+22 06 00" (deg ' "). */
export function decDms(deg: number): string {
  const sign = deg < 0 ? '−' : '+';
  const total = Math.round(Math.abs(deg) * 3600);
  const d = Math.floor(total / 3600);
  const m = Math.floor((total % 3600) / 60);
  const s = total % 60;
  return `${sign}${String(d).padStart(2, '0')} ${String(m).padStart(2, '0')} ${String(s).padStart(2, '0')}`;
}

/** A number cell's text, or an en dash for none. */
export function maybe(x: number | null | undefined, digits: number): string {
  return x === null || x === undefined || !Number.isFinite(x) ? '–' : num(x, digits);
}
