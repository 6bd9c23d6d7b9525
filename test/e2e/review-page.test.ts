import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import { openStore } from '../../src/store/index.js';
import { DEMO_TOKENS, demoConfig, demoConfigRaw, tempDir } from '../helpers.js';
import { INVENTED, INVENTED_FAR_SOUTH, inventedEstimate, plannedAssessment, storeAssessed, type RequestJson } from '../views/fixtures.js';
import { startServe, type ServiceProcess } from '../service-process.js';

/**
 * The review pages in a real browser: the service started as `nightjar serve` on a temporary
 * database holding tonight's requests for invented objects, the pages and pictures opened in
 * headless Chromium (Debian's package at /usr/bin/chromium, driven by playwright-core), text
 * measured where the browser drew it, screenshots kept. Skips, saying why, where Chromium is
 * not installed; the test run's last lines say whether it ran (test/e2e/browser-report.ts).
 */

/** Debian's Chromium; NIGHTJAR_CHROMIUM names another binary. */
export const CHROMIUM = process.env['NIGHTJAR_CHROMIUM'] ?? '/usr/bin/chromium';
const hasChromium = existsSync(CHROMIUM);
const SKIP_NOTE = `${CHROMIUM} not found: install Debian's chromium package to run the browser test`;
/** Where the screenshots go: NIGHTJAR_SCREENSHOTS if set, else a temporary folder (printed). */
let shots = process.env['NIGHTJAR_SCREENSHOTS'] ?? '';

let serve: ServiceProcess | null = null;
let browser: BrowserContext | null = null;
let base = '';
const config = demoConfig();

/** A temporary config (port 0, its own database and inbox) and a database holding tonight's requests. */
function prepare(dir: string): string {
  const raw = demoConfigRaw();
  const service = raw['service'] as Record<string, unknown>;
  const db = join(dir, 'nightjar.sqlite');
  service['port'] = 0;
  service['databasePath'] = db;
  service['logLevel'] = 'info';
  service['inbox'] = { path: join(dir, 'inbox'), settleMs: 300, seedDemo: false, schedule: '*/5 * * * * *' };
  const configPath = join(dir, 'config.json');
  writeFileSync(configPath, JSON.stringify(raw));

  const now = new Date();
  const store = openStore(db, MIGRATIONS_DIR, () => now);
  const planned = new Map([...INVENTED, INVENTED_FAR_SOUTH].map((o) => [o.objectId, plannedAssessment(inventedEstimate(o, { at: now }), config.sites, now, 24)]));
  storeAssessed(store, planned, { sender: 'Invented Survey (browser test)', receivedAt: now.toISOString(), assessedAt: now.toISOString() });
  store.db.close();
  return configPath;
}

beforeAll(async () => {
  if (!hasChromium) return;
  const { chromium } = await import('playwright-core');
  const dir = tempDir('nightjar-e2e-');
  serve = startServe(prepare(dir));
  base = await serve.url;
  const userDataDir = join(dir, 'chromium-profile');
  mkdirSync(userDataDir);
  if (shots === '') shots = tempDir('nightjar-screens-');
  mkdirSync(shots, { recursive: true });
  // A fresh profile directory (playwright passes it as --user-data-dir).
  browser = await chromium.launchPersistentContext(userDataDir, {
    executablePath: CHROMIUM,
    viewport: { width: 1300, height: 1000 },
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
  });
}, 90_000);

afterAll(async () => {
  await browser?.close();
  if (serve && serve.proc.exitCode === null) serve.proc.kill('SIGTERM');
  if (hasChromium) console.log(`browser test screenshots: ${shots}`);
});

async function page(): Promise<Page> {
  return browser!.pages()[0] ?? (await browser!.newPage());
}

async function json<T>(path: string): Promise<T> {
  const res = await fetch(`${base}${path}`);
  expect(res.status, path).toBe(200);
  return (await res.json()) as T;
}

/** Opens a picture by its address, returns the boxes of its text as the browser drew them and its size; keeps a screenshot. */
async function openPicture(p: Page, path: string, shot: string | null): Promise<{ texts: { text: string; left: number; top: number; right: number; bottom: number; cls: string }[]; width: number; height: number }> {
  const res = await p.goto(`${base}${path}`, { waitUntil: 'load' });
  expect(res?.status(), path).toBe(200);
  const size = await p.$eval('svg', (root) => ({ width: Number(root.getAttribute('width')), height: Number(root.getAttribute('height')) }));
  await p.setViewportSize({ width: Math.ceil(size.width), height: Math.ceil(size.height) });
  const texts = await p.$$eval('text', (els) =>
    els
      .map((e) => {
        const r = e.getBoundingClientRect();
        return { text: e.textContent ?? '', left: r.left, top: r.top, right: r.right, bottom: r.bottom, cls: e.getAttribute('class') ?? '' };
      })
      .filter((b) => b.text.trim() !== '' && b.right > b.left),
  );
  if (shot) await p.screenshot({ path: join(shots, shot) });
  await p.setViewportSize({ width: 1300, height: 1000 });
  return { texts, ...size };
}

/** Pairs of drawn text boxes that overlap by more than half a pixel each way. */
function overlaps(texts: { text: string; left: number; top: number; right: number; bottom: number }[]): string[] {
  const bad: string[] = [];
  for (let i = 0; i < texts.length; i++) {
    for (let j = i + 1; j < texts.length; j++) {
      const a = texts[i]!;
      const b = texts[j]!;
      if (a.left < b.right - 0.5 && b.left < a.right - 0.5 && a.top < b.bottom - 0.5 && b.top < a.bottom - 0.5) bad.push(`"${a.text}" and "${b.text}"`);
    }
  }
  return bad;
}

describe('the review pages in headless Chromium', () => {
  it('show both sites with their timelines, queues and cautions, every picture loaded', { timeout: 90_000 }, async (ctx) => {
    if (!hasChromium) return ctx.skip(SKIP_NOTE);
    const p = await page();
    const response = await p.goto(`${base}/`, { waitUntil: 'load' });
    expect(response?.status()).toBe(200);
    const text = await p.locator('body').innerText();
    for (const site of config.sites) expect(text).toContain(site.name);
    expect(text).toContain('Cautions');
    expect(text).toContain('Without a request at');
    expect(text).toContain(INVENTED_FAR_SOUTH.objectId);
    const images = await p.$$eval('img', (imgs) => imgs.map((img) => ({ src: img.getAttribute('src'), ok: img.complete && img.naturalWidth > 0 })));
    expect(images.length).toBe(config.sites.length);
    for (const image of images) expect(image.ok, image.src ?? '').toBe(true);
    await p.screenshot({ path: join(shots, 'review-page.png'), fullPage: true });
    expect(readFileSync(join(shots, 'review-page.png')).subarray(0, 4).toString('hex')).toBe('89504e47');
  });

  it('draw every object of a site’s queue as a row of tonight’s timeline, with the JSON’s numbers, and no label over another', { timeout: 90_000 }, async (ctx) => {
    if (!hasChromium) return ctx.skip(SKIP_NOTE);
    const p = await page();
    await p.goto(`${base}/`, { waitUntil: 'load' });
    const sources = await p.$$eval('img', (imgs) => imgs.map((img) => img.getAttribute('src')!));
    // The test runs on the real clock: a site whose night is under way may have nothing left to do in it
    // (its requests wait for the next night), so only the pictures together must draw some request.
    let requestsDrawn = 0;
    for (const [i, src] of sources.entries()) {
      const drawn = await openPicture(p, src, `tonight-${i + 1}.png`);
      expect(overlaps(drawn.texts), src).toEqual([]);
      for (const t of drawn.texts) expect(t.right, `"${t.text}" runs off the picture`).toBeLessThanOrEqual(drawn.width + 0.5);
      const svg = await p.$eval('svg', (root) => ({ site: root.getAttribute('data-site-id')!, start: root.getAttribute('data-start')!, end: root.getAttribute('data-end')! }));
      const queue = (await json<{ items: RequestJson[] }>(`/v1/queue?site=${svg.site}&from=${svg.start}&to=${svg.end}&limit=500`)).items;
      requestsDrawn += queue.length;
      const names = drawn.texts.filter((t) => t.cls.includes('object-name')).map((t) => t.text);
      for (const objectId of new Set(queue.map((r) => r.objectId))) expect(names, `${objectId} in the timeline at ${svg.site}`).toContain(objectId);
      const marks = await p.$$eval('g.request-mark', (gs) => gs.map((g) => ({ id: g.getAttribute('data-request-id')!, score: Number(g.getAttribute('data-score')), start: g.getAttribute('data-recommended-start')!, durationS: Number(g.getAttribute('data-duration-s')) })));
      for (const r of queue) {
        const mark = marks.find((m) => m.id === r.id);
        expect(mark, r.id).toBeDefined();
        expect(mark!.score).toBe(r.score);
        expect(mark!.start).toBe(r.recommendedStart);
        expect(mark!.durationS).toBe(r.plan.expectedDurationS);
      }
    }
    expect(requestsDrawn, 'requests drawn on the timelines of all sites').toBeGreaterThan(0);
  });

  it('draw where to point with the close view smaller than the wide one, the JSON’s numbers, and no label over another', { timeout: 120_000 }, async (ctx) => {
    if (!hasChromium) return ctx.skip(SKIP_NOTE);
    const p = await page();
    await p.goto(`${base}/`, { waitUntil: 'load' });
    const links = await p.$$eval('table.queue tr[data-request-id]', (rows) =>
      rows.map((r) => ({ id: r.getAttribute('data-request-id')!, href: [...r.querySelectorAll('a')].find((a) => a.textContent === 'where to point')!.getAttribute('href')! })),
    );
    expect(links.length).toBeGreaterThan(0);
    let compared = 0;
    for (const [i, link] of links.entries()) {
      const drawn = await openPicture(p, link.href, i < 2 ? `pointing-${i + 1}.png` : null);
      expect(overlaps(drawn.texts), link.href).toEqual([]);
      for (const t of drawn.texts) expect(t.right, `"${t.text}" runs off the picture`).toBeLessThanOrEqual(drawn.width + 0.5);
      const views = await p.$eval('svg', (root) => {
        const extent = (name: string) => {
          const g = root.querySelector(`g.panel-${name}`)!;
          const frame = g.querySelector('rect')!.getBoundingClientRect();
          return { arcsec: 2 * Number(g.getAttribute('data-extent-arcsec')), px: frame.width };
        };
        const n = (a: string) => Number(root.getAttribute(a));
        return { wide: extent('wide'), close: extent('close'), t: root.getAttribute('data-t')!, ra: n('data-ra-deg'), dec: n('data-dec-deg'), alt: n('data-alt-deg'), airmass: n('data-airmass'), major: n('data-unc-major-arcsec') };
      });
      // Same drawn size, so fewer arcsec across is the closer (smaller) view.
      expect(views.close.px).toBeCloseTo(views.wide.px, 0);
      expect(views.close.arcsec).toBeLessThan(views.wide.arcsec);
      const request = await json<{ recommendedStart: string; plan: RequestJson['plan'] }>(`/v1/requests/${link.id}`);
      const r = request.plan;
      if (Date.parse(views.t) !== Math.ceil(Date.parse(request.recommendedStart) / 1000) * 1000) continue;
      compared++;
      // Interpolated in the request's 5-minute table at the recommended start: within 1 arcsec of its target.
      expect(Math.abs(views.ra - r.target.raDeg) * Math.cos((r.target.decDeg * Math.PI) / 180) * 3600).toBeLessThan(1);
      expect(Math.abs(views.dec - r.target.decDeg) * 3600).toBeLessThan(1);
      expect(Math.abs(views.alt - r.conditionsAtStart.altitudeDeg)).toBeLessThan(0.05);
      expect(Math.abs(views.airmass - r.conditionsAtStart.airmass)).toBeLessThan(0.01);
      if (r.target.uncertainty1Sigma) expect(Math.abs(views.major - r.target.uncertainty1Sigma.majorArcsec)).toBeLessThan(0.1);
    }
    expect(compared, 'pictures drawn at a request’s recommended start').toBeGreaterThan(0);
  });

  it('reach each object’s page from the queue table, with its estimate, requests and where to point', { timeout: 90_000 }, async (ctx) => {
    if (!hasChromium) return ctx.skip(SKIP_NOTE);
    const p = await page();
    await p.goto(`${base}/`, { waitUntil: 'load' });
    await p.locator('table.queue a', { hasText: INVENTED[0]!.objectId }).first().click();
    await p.waitForLoadState('load');
    expect(new URL(p.url()).pathname).toBe(`/objects/${INVENTED[0]!.objectId}`);
    expect(await p.locator('h1').innerText()).toBe(INVENTED[0]!.objectId);
    const text = await p.locator('body').innerText();
    for (const words of ['Estimate', 'Orbit classes', 'near-Earth (q < 1.3 au)', 'Absolute magnitude H', 'Closest approach', 'history']) expect(text).toContain(words);
    const images = await p.$$eval('img', (imgs) => imgs.map((img) => ({ src: img.getAttribute('src'), ok: img.complete && img.naturalWidth > 0 })));
    expect(images.length).toBeGreaterThan(0);
    for (const image of images) expect(image.ok, image.src ?? '').toBe(true);
    await p.screenshot({ path: join(shots, 'object-page.png'), fullPage: true });
  });

  it('keep a token the page was reached with for its pictures and links', { timeout: 90_000 }, async (ctx) => {
    if (!hasChromium) return ctx.skip(SKIP_NOTE);
    const p = await page();
    await p.goto(`${base}/?token=${DEMO_TOKENS.reader}`, { waitUntil: 'load' });
    const images = await p.$$eval('img', (imgs) => imgs.map((img) => ({ src: img.getAttribute('src')!, ok: img.complete && img.naturalWidth > 0 })));
    for (const image of images) {
      expect(image.src).toContain(`token=${DEMO_TOKENS.reader}`);
      expect(image.ok, image.src).toBe(true);
    }
    const objectLink = await p.locator('table.queue a').first().getAttribute('href');
    expect(objectLink).toContain(`token=${DEMO_TOKENS.reader}`);
  });
});
