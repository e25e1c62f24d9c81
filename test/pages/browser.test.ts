/**
 * The pages in a real browser: Debian's headless Chromium driven by
 * playwright-core, against the real HTTP server (port 0) with every route
 * module, over the scenario of fixtures.ts. Screenshots land in
 * test/artifacts/ (git-ignored) for a person to look at.
 */
import { existsSync, mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { chromium, type Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildRouter } from '../../service/http/app.js';
import { routeModules } from '../../service/http/routes.js';
import { startHttpServer, type HttpServer } from '../../service/http/server.js';
import { createMetrics } from '../../service/metrics.js';
import { projectPath } from '../../service/paths.js';
import { createPagesScenario, type PagesScenario } from './fixtures.js';

const CHROMIUM = '/usr/bin/chromium';
const ARTIFACTS = projectPath('test', 'artifacts');
const hasChromium = existsSync(CHROMIUM);
if (!hasChromium) console.warn(`[pages browser test] skipped: ${CHROMIUM} is missing (install Debian's chromium package; .ci/run does)`);

describe.skipIf(!hasChromium)('human pages in headless Chromium', () => {
  let scenario: PagesScenario;
  let server: HttpServer;
  let browser: Browser;

  beforeAll(async () => {
    mkdirSync(ARTIFACTS, { recursive: true });
    scenario = await createPagesScenario();
    const metrics = createMetrics();
    server = await startHttpServer({
      router: buildRouter({ rt: scenario.rt, metrics, status: scenario.status }, routeModules),
      port: 0,
      host: '127.0.0.1',
      log: scenario.rt.log,
      metrics,
    });
    browser = await chromium.launch({
      executablePath: CHROMIUM,
      args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-quic', '--no-first-run', '--disable-component-update', '--disable-sync'],
    });
  });
  afterAll(async () => {
    await browser?.close();
    await server?.close();
    await scenario?.drop();
  });

  it('lists the flows and open incidents, follows a link to an incident and shows its chart with the flagged days', async () => {
    const page = await browser.newPage({ viewport: { width: 1100, height: 900 } });
    const requests: string[] = [];
    const dialogs: string[] = [];
    const consoleErrors: string[] = [];
    page.on('request', (request) => requests.push(request.url()));
    page.on('dialog', (dialog) => {
      dialogs.push(dialog.message());
      void dialog.dismiss();
    });
    page.on('console', (message) => {
      if (message.type() === 'error') consoleErrors.push(message.text());
    });

    const response = await page.goto(`${server.url}/`);
    expect(response?.status()).toBe(200);
    expect(await page.title()).toBe('Overview · plumbline');

    const flows = page.locator('section, table').filter({ has: page.locator('caption', { hasText: 'flows watched' }) });
    const flowIds = await flows.locator('tbody th[scope="row"]').allInnerTexts();
    expect(flowIds.sort()).toEqual(['account_signup', 'monthly_pass']);

    const open = page.locator('table').filter({ has: page.locator('caption', { hasText: 'Unresolved incidents' }) });
    const openLinks = open.locator('tbody a');
    expect(await openLinks.count()).toBe(6);
    await expect.poll(() => open.locator('tbody').innerText()).toContain('</td><script>alert(1)</script>');
    await page.screenshot({ path: join(ARTIFACTS, 'pages-overview.png'), fullPage: true });

    await open.getByRole('link', { name: 'android zone -> rider conversion fell after release 7.4.0' }).click();
    await page.waitForURL(/\/incidents\/monthly_pass-20260304-[0-9a-f]{8}$/);
    expect(await page.getByRole('heading', { level: 1 }).innerText()).toBe('android zone -> rider conversion fell after release 7.4.0');

    const chart = page.getByRole('img', { name: /^conversion of rider on android: daily values with the expected range, 3 flagged days$/ });
    await expect.poll(() => chart.count()).toBe(1);
    const svg = chart.locator('svg');
    expect(await svg.count()).toBe(1);
    const box = await svg.boundingBox();
    expect(box?.width).toBeGreaterThan(300);
    // The flagged days are the chart's only symbol marks, drawn in red; the band is an area mark.
    const points = svg.locator('g.mark-symbol path');
    expect(await points.count()).toBe(3);
    expect(await points.first().getAttribute('fill')).toBe('#d64545');
    expect(await svg.locator('g.mark-area path').count()).toBe(1);
    const flaggedRows = page.locator('section.symptom').first().locator('table').filter({ has: page.locator('caption', { hasText: 'Flagged days' }) }).locator('tbody tr');
    expect(await flaggedRows.count()).toBe(3);

    const split = page.locator('table').filter({ has: page.locator('caption', { hasText: 'People summed over the days' }) });
    expect(await split.locator('tr.blamed').innerText()).toMatch(/7\.4\.0 \(blamed\)\s+1,800\s+450\s+25\.0%/);
    await page.screenshot({ path: join(ARTIFACTS, 'pages-incident.png'), fullPage: true });

    expect(dialogs).toEqual([]);
    expect(consoleErrors).toEqual([]);
    expect(requests.every((url) => url.startsWith(`${server.url}/`))).toBe(true);
    expect(existsSync(join(ARTIFACTS, 'pages-overview.png'))).toBe(true);
    expect(existsSync(join(ARTIFACTS, 'pages-incident.png'))).toBe(true);
    await page.close();
  });

  it('shows a 404 page for an unknown incident, with a way back', async () => {
    const page = await browser.newPage();
    const response = await page.goto(`${server.url}/incidents/monthly_pass-20990101-00000000`);
    expect(response?.status()).toBe(404);
    await page.getByRole('link', { name: 'Open incidents are listed on the overview.' }).click();
    await page.waitForURL(`${server.url}/`);
    expect(await page.getByRole('heading', { level: 1 }).innerText()).toBe('Overview');
    await page.close();
  });
});
