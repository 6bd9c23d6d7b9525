import { existsSync, mkdirSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { MIGRATIONS_DIR } from '../../src/config/load.js';
import { openStore } from '../../src/store/index.js';
import { demoConfig, demoConfigRaw, tempDir } from '../helpers.js';
import { INVENTED, inventedEstimate, plannedRequests } from '../views/fixtures.js';
import { startServe, type ServiceProcess } from '../service-process.js';

/**
 * The review page in a real browser: the service started as `nightjar serve` on a temporary
 * database holding tonight's requests for invented objects, the page loaded in headless
 * Chromium (Debian's package at /usr/bin/chromium, driven by playwright-core), a screenshot
 * taken. Skips, saying why, where Chromium is not installed.
 */

const CHROMIUM = '/usr/bin/chromium';
const hasChromium = existsSync(CHROMIUM);
if (!hasChromium) console.log(`review page browser test skipped: ${CHROMIUM} not found (install Debian's chromium package to run it)`);

let child: ServiceProcess | null = null;
afterEach(() => {
  if (child && child.proc.exitCode === null) child.proc.kill('SIGKILL');
  child = null;
});

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
  const config = demoConfig();
  const store = openStore(db, MIGRATIONS_DIR, () => now);
  for (const o of INVENTED) {
    store.notices.recordNotice({
      sender: 'Invented Survey (browser test)',
      noticeId: `e2e-${o.objectId}`,
      objectId: o.objectId,
      source: 'test',
      receivedAt: now.toISOString(),
      issuedAt: now.toISOString(),
      raw: '{}',
      kind: 'observations',
      retractionReason: null,
      orbitJson: null,
      observations: [],
    });
    const estimate = inventedEstimate(o, { at: now });
    store.requests.saveAssessment({ objectId: o.objectId, createdAt: now.toISOString(), observations: 3, summary: {}, requests: plannedRequests(estimate, config.sites, now, 24) });
  }
  store.db.close();
  return configPath;
}

describe.skipIf(!hasChromium)('the review page in headless Chromium', () => {
  it('shows both demo sites with their pictures and can be captured as a PNG', { timeout: 90_000 }, async () => {
    const { chromium } = await import('playwright-core');
    const dir = tempDir('nightjar-e2e-');
    const configPath = prepare(dir);
    const serve = startServe(configPath);
    child = serve;
    const url = await serve.url;

    const userDataDir = join(dir, 'chromium-profile');
    mkdirSync(userDataDir);
    // A fresh profile directory (playwright passes it as --user-data-dir).
    const browser = await chromium.launchPersistentContext(userDataDir, {
      executablePath: CHROMIUM,
      viewport: { width: 1100, height: 1000 },
      args: [
        '--headless',
        '--no-sandbox',
        '--disable-gpu',
        '--disable-quic',
        '--no-first-run',
        '--disable-background-networking',
        '--disable-component-update',
        '--disable-sync',
      ],
    });
    try {
      const page = browser.pages()[0] ?? (await browser.newPage());
      const response = await page.goto(`${url}/`, { waitUntil: 'load' });
      expect(response?.status(), 'GET / (is pictureRoutes wired into src/api/app.ts?)').toBe(200);
      const text = await page.locator('body').innerText();
      for (const site of demoConfig().sites) expect(text).toContain(site.name);
      expect(text).toContain('Cautions');
      // Every picture on the page loaded and was decoded by the browser.
      const images = await page.$$eval('img', (imgs) => imgs.map((img) => ({ src: img.getAttribute('src'), ok: img.complete && img.naturalWidth > 0 })));
      expect(images.length).toBeGreaterThanOrEqual(2);
      for (const image of images) expect(image.ok, image.src ?? '').toBe(true);

      const shot = join(dir, 'review-page.png');
      await page.screenshot({ path: shot, fullPage: true });
      const png = readFileSync(shot);
      expect(statSync(shot).size).toBeGreaterThan(10_000);
      expect(png.subarray(0, 8).equals(Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]))).toBe(true);
    } finally {
      await browser.close();
    }
    serve.proc.kill('SIGTERM');
  });
});
