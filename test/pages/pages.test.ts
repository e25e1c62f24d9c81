/**
 * The human pages rendered by their route handlers (no browser, no socket)
 * over a state schema with two flows and an incident of every cause label,
 * built through the real incident code (see fixtures.ts).
 */
import type { IncomingMessage } from 'node:http';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildRouter } from '../../service/http/app.js';
import { pageRoutes } from '../../service/http/pages/index.js';
import type { HttpResponse, Router } from '../../service/http/router.js';
import { createMetrics } from '../../service/metrics.js';
import { createPagesScenario, FAILED_RUN_ERROR, HOSTILE_EVENT, PARKED_ERROR, SECRET_VALUE, SPECS, type PagesScenario } from './fixtures.js';

const ESCAPED_HOSTILE = '&lt;/td&gt;&lt;script&gt;alert(1)&lt;/script&gt;';

async function get(router: Router, path: string): Promise<HttpResponse & { text: string }> {
  const match = router.match('GET', path);
  if (match.kind !== 'found') throw new Error(`no route for ${path}`);
  const response = await match.handler({
    method: 'GET',
    path,
    params: match.params,
    query: new URLSearchParams(),
    headers: {},
    route: match.route,
    raw: {} as IncomingMessage,
  });
  return { ...response, text: String(response.body) };
}

/** The markup of one `<section>`/heading block: from the heading with `id` to the next h2. */
function section(page: string, id: string): string {
  const start = page.indexOf(`<h2 id="${id}">`);
  if (start < 0) throw new Error(`no section ${id}`);
  const next = page.indexOf('<h2 ', start + 1);
  return page.slice(start, next < 0 ? undefined : next);
}

describe('human pages, rendered by their handlers', () => {
  let scenario: PagesScenario;
  let router: Router;

  beforeAll(async () => {
    scenario = await createPagesScenario();
    router = buildRouter({ rt: scenario.rt, metrics: createMetrics(), status: scenario.status }, [pageRoutes]);
  });
  afterAll(async () => {
    await scenario?.drop();
  });

  it('the overview lists each flow with its newest verdict and open incidents', async () => {
    const response = await get(router, '/');
    expect(response.status).toBe(200);
    expect(response.headers?.['content-type']).toBe('text/html; charset=utf-8');
    const flows = section(response.text, 'flows');
    for (const text of ['monthly_pass', 'Buy a monthly pass', 'growth-analytics', 'account_signup', 'Create an account', 'accounts', 'web, android, ios', '2026-03-06']) {
      expect(flows).toContain(text);
    }
    // monthly_pass: release, hostile, hidden; account_signup: platform, segment, delay (calendar resolved).
    expect(flows).toMatch(/monthly_pass.*?<td class="num">3<\/td>/s);
    expect(flows).toMatch(/account_signup.*?<td class="num">3<\/td>/s);
    expect(response.text).not.toContain('Demo:');
  });

  it('lists open incidents with relative links, recently resolved ones apart', async () => {
    const page = (await get(router, '/')).text;
    const open = section(page, 'open');
    const resolved = section(page, 'resolved');
    for (const key of ['release', 'hostile', 'hidden', 'platform', 'segment', 'delay']) {
      expect(open).toContain(`href="./incidents/${scenario.ids[key]}"`);
      expect(resolved).not.toContain(scenario.ids[key]!);
    }
    expect(open).toContain('Open incidents (6)');
    expect(open).toContain('android zone -&gt; rider conversion fell after release 7.4.0');
    expect(open).toContain('app release');
    expect(open).toMatch(/signup_submitted stopped arriving.*?\(muted\)/s);
    // Most severe first.
    expect(open.indexOf(scenario.ids.release!)).toBeLessThan(open.indexOf(scenario.ids.platform!));
    expect(resolved).toContain(`href="./incidents/${scenario.ids.calendar}"`);
    expect(resolved).toContain('2026-03-04');
    expect(open).not.toContain(scenario.ids.calendar!);
  });

  it('hides parameter values that privacy.ts does not allow, on the overview too', async () => {
    const page = (await get(router, '/')).text;
    expect(page).not.toContain(SECRET_VALUE);
    expect(section(page, 'open')).toContain('zone_selected.fare_zone on ios 5.2.0: app release');
  });

  it('shows the last runs and the parked and pending chat messages with their errors, escaped', async () => {
    const page = (await get(router, '/')).text;
    const runs = section(page, 'runs');
    expect(runs).toContain('failed');
    expect(runs).toContain('4.2 s');
    expect(runs).toContain('300 ms');
    expect(runs).toContain('The only failed runs are in the table above.');
    expect(runs).toContain('&quot;&gt;&lt;img src=x onerror=alert(1)&gt;');
    expect(FAILED_RUN_ERROR).toContain('<img');
    const outbox = section(page, 'outbox');
    expect(outbox).toMatch(/<th scope="row">parked<\/th><td class="num">1<\/td>/);
    expect(outbox).toContain(`chat webhook answered 404 ${ESCAPED_HOSTILE}`);
    expect(PARKED_ERROR).toContain('<script>');
    expect(outbox).toContain('Waiting to be sent');
    expect(outbox).toMatch(/<h3 id="waiting">Waiting to be sent \([1-9]\d*\)<\/h3>/);
  });

  it('shows the rows of recent days that were set aside or repaired, and the row limits reached', async () => {
    const status = section((await get(router, '/')).text, 'day-status');
    expect(status).toContain('Rows not used as sent');
    expect(status).toMatch(/2026-03-06.*?ios.*?<td class="num">9,120<\/td><td class="num">31<\/td><td class="num">4<\/td><td class="num">0<\/td><td class="num">0<\/td><td>versions: 812 seen, 500 kept<\/td>/s);
  });

  it('never lets a hostile event name become markup', async () => {
    for (const path of ['/', `/incidents/${scenario.ids.hostile}`]) {
      const page = (await get(router, path)).text;
      expect(page).toContain(ESCAPED_HOSTILE);
      expect(page).not.toMatch(/<script/i);
      expect(page).not.toContain(HOSTILE_EVENT);
      expect(page).not.toMatch(/<img/i);
    }
  });

  it('the incident page of a release: headline, status, cause with evidence, symptom chart, per-version split, timeline', async () => {
    const response = await get(router, `/incidents/${scenario.ids.release}`);
    expect(response.status).toBe(200);
    const page = response.text;
    expect(page).toContain('<h1><bdi>android zone -&gt; rider conversion fell after release 7.4.0</bdi></h1>');
    expect(page).toContain('<span class="sev sev-page">page ▮▮▮</span> · ongoing');
    expect(page).toContain('2026-03-04');
    expect(page).toContain('growth-analytics');

    const cause = section(page, 'cause');
    expect(cause).toContain('Likely cause: <bdi>app release</bdi>');
    expect(cause).toContain('lost the rider step');
    for (const [key, value] of [['version', '7.4.0'], ['first seen', '2026-03-03'], ['adoption', '41.0%'], ['version rate', '25.0%'], ['rest rate', '78.0%']]) {
      expect(cause).toContain(`<th scope="row"><bdi>${key}</bdi></th><td><bdi>${value}</bdi></td>`);
    }

    const split = section(page, 'versions');
    expect(split).toContain('Per app version on <bdi>android</bdi>');
    expect(split).toMatch(/<tr class="blamed"><th scope="row"><bdi>7\.4\.0<\/bdi> <strong>\(blamed\)<\/strong><\/th><td class="num">1,800<\/td><td class="num">450<\/td><td class="num">25\.0%<\/td><\/tr>/);
    expect(split).toMatch(/<bdi>7\.3\.2<\/bdi><\/th><td class="num">3,000<\/td><td class="num">2,340<\/td><td class="num">78\.0%<\/td>/);
    expect(split).toMatch(/every version except the blamed one<\/th><td class="num">3,000<\/td><td class="num">2,340<\/td><td class="num">78\.0%/);
    expect(split).toMatch(/<tfoot>.*4,800.*2,790.*58\.1%/s);
    expect(split).toContain('from 2026-03-04 to 2026-03-06');
    expect(split.match(/<th scope="row"><time datetime="2026-03-0[456]">2026-03-0[456]<\/time><\/th><td class="num">150<\/td><td class="num">25\.0%<\/td><td class="num">78\.0%<\/td>/g)).toHaveLength(3);

    const symptoms = section(page, 'symptoms');
    expect(symptoms).toContain('<svg');
    expect(symptoms).toMatch(/<div role="img" aria-label="conversion of rider on android: daily values with the expected range, 3 flagged days">/);
    const symbols = symptoms.match(/<g class="mark-symbol role-mark"[^>]*>(.*?)<\/g>/s);
    expect(symbols?.[1]?.match(/<path /g)).toHaveLength(3);
    expect(symptoms).toContain('Flagged days (3).');
    expect(symptoms).toContain('40.5%');
    expect(symptoms).toContain('58.0% to 66.0%');

    const timeline = section(page, 'timeline');
    for (const day of ['2026-03-04', '2026-03-05', '2026-03-06']) expect(timeline).toContain(`<th scope="row"><time datetime="${day}">${day}</time></th>`);
  });

  it('renders every cause label with its meaning, and the split only for releases', async () => {
    const meanings: Record<string, string> = {
      release: 'The change sits in one app version',
      behaviour: 'The whole flow moved on every platform in proportion',
      platform: 'One platform moved away from the others',
      calendar: 'declared holiday or campaign',
      segment: 'One slice of an extra dimension',
      data_delay: 'Events arrived late or stopped arriving',
    };
    for (const spec of SPECS) {
      const response = await get(router, `/incidents/${scenario.ids[spec.key]}`);
      expect(response.status, spec.key).toBe(200);
      expect(section(response.text, 'cause'), spec.key).toContain(meanings[spec.cause.label]);
      expect(response.text.includes('<h2 id="versions">'), spec.key).toBe(spec.cause.label === 'release');
    }
    const segment = section((await get(router, `/incidents/${scenario.ids.segment}`)).text, 'cause');
    expect(segment).toContain('<bdi>channel</bdi>');
    expect(segment).toContain('<bdi>partner</bdi>');
    expect(segment).toContain('0.82');
    const resolved = (await get(router, `/incidents/${scenario.ids.calendar}`)).text;
    expect(resolved).toContain('resolved ▯▯▯ on <time datetime="2026-03-04">2026-03-04</time> (not seen again');
    const muted = (await get(router, `/incidents/${scenario.ids.delay}`)).text;
    expect(muted).toContain('never announced in chat (muted)');
    expect(muted).toContain('collector maintenance announced');
  });

  it('keeps hidden parameter values off the incident page and says why there is no split', async () => {
    const page = (await get(router, `/incidents/${scenario.ids.hidden}`)).text;
    expect(page).not.toContain(SECRET_VALUE);
    expect(page).toContain('parameter values not shown');
    expect(section(page, 'versions')).toContain('No per-version split: its symptoms have no per-version measure');
  });

  it('answers 404 with a way back for an unknown incident', async () => {
    const response = await get(router, `/incidents/${encodeURIComponent('nope-<b>')}`);
    expect(response.status).toBe(404);
    expect(response.text).toContain('Incident not found');
    expect(response.text).toContain('nope-&lt;b&gt;');
    expect(response.text).toContain('<a href="../">');
  });

  it('says so when serving the demo', async () => {
    const demo = buildRouter({ rt: scenario.rt, metrics: createMetrics(), status: { ...scenario.status, demo: true } }, [pageRoutes]);
    expect((await get(demo, '/')).text).toContain('Demo: these pages show the invented Metro Pass scenario');
    expect((await get(demo, `/incidents/${scenario.ids.release}`)).text).toContain('Demo:');
  });
});
