import { mkdirSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { type Browser, type BrowserContext, chromium, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CAUTION } from '../../../../packages/monitor/src/caution.js';
import { createTestDatabase, type TestDatabase } from '../../../../test/support/database.js';
import type { ApiApp } from '../app.js';
import { buildTestApp } from '../test-support/app.js';
import {
  analyseStored,
  createUser,
  insertAlert,
  insertComputedResult,
  insertResults,
  inventedCompressorResult,
  inventedTurbineResult,
  seedPlant,
  setBands,
  setBaseline,
} from '../test-support/seed.js';

const HOUR = 3_600_000;
const ARTIFACTS = new URL('../../../../test-results/api-dashboard/', import.meta.url).pathname;

describe('dashboard in Chromium', () => {
  let db: TestDatabase;
  let app: ApiApp;
  let browser: Browser;
  let page: Page;
  let base: string;
  let configDir: string;
  let context: BrowserContext;
  let turbineId: number;
  let compressorId: number;
  let alertId: number;
  let instrumentAlertId: number;
  const turbine = inventedTurbineResult();
  const pageErrors: string[] = [];

  beforeAll(async () => {
    mkdirSync(ARTIFACTS, { recursive: true });
    db = await createTestDatabase();
    const plant = await seedPlant(db.pool);
    turbineId = plant.turbineId;
    await createUser(db.pool, 'eng', 'engineer', 'engineer-password');
    await setBands(db.pool, turbineId, 2, 4);
    await setBaseline(db.pool, turbineId, [0.86], 0, 2);
    const now = Date.now();
    const start = Math.floor((now - 7 * 24 * HOUR) / HOUR) * HOUR;
    // A week of hourly results drifting from 0.85 to 0.83 (invented demo data).
    await insertResults(
      db.pool,
      turbineId,
      Array.from({ length: 167 }, (_, i) => ({
        t: start + i * HOUR,
        efficiency: 0.85 - (0.02 * i) / 167,
        operatingPoint: 0.9,
        power: 1.2e7,
        specificWork: 6e5,
      })),
    );
    await insertComputedResult(db.pool, turbineId, start + 167 * HOUR, turbine, 0.9);
    // The compressor's last valid result is three days old; every result since is flagged
    // (a gauge/absolute mix-up, invented demo data), and an instrument alert is open on it.
    compressorId = plant.compressorId;
    await setBands(db.pool, compressorId, 2, 4);
    await insertComputedResult(db.pool, compressorId, now - 72 * HOUR, inventedCompressorResult(), 0.8);
    await insertResults(
      db.pool,
      compressorId,
      Array.from({ length: 48 }, (_, i) => ({ t: now - (47 - i) * HOUR, efficiency: null, valid: false })),
    );
    await db.pool.query(
      `UPDATE results SET flags = ARRAY['fault:gauge-absolute:inletPressure'] WHERE machine_id = $1 AND NOT valid`,
      [compressorId],
    );
    // Inserted first, so the API (newest id first) lists it after the turbine's alert.
    instrumentAlertId = await insertAlert(
      db.pool,
      compressorId,
      'active_unacknowledged',
      'warning',
      'instrument',
    );
    await db.pool.query(`UPDATE alerts SET evidence = $2 WHERE id = $1`, [
      instrumentAlertId,
      JSON.stringify({
        faults: ['gauge-absolute'],
        role: 'inletPressure',
        tagId: null,
        window: { from: new Date(now - 2 * HOUR).toISOString(), to: new Date(now - HOUR).toISOString() },
        onDelayS: 1800,
        offDelayS: 1800,
      }),
    ]);
    alertId = await insertAlert(db.pool, turbineId, 'active_unacknowledged');
    // Evidence as the alert job writes it (services/jobs alerts job), figures invented.
    await db.pool.query(`UPDATE alerts SET evidence = $2, message = $3 WHERE id = $1`, [
      alertId,
      JSON.stringify({
        driftPts: -2.1234,
        uDriftPts: 0.2,
        k: 2,
        expandedUDriftPts: 0.4,
        coverage: 0.95,
        points: 57,
        operatingPoint: 0.9,
        baselineOperatingPoint: 'load',
        window: { from: new Date(now - 2 * HOUR).toISOString(), to: new Date(now - HOUR).toISOString() },
        band: {
          warningPts: -2,
          alarmPts: -4,
          deadbandPts: 0.5,
          onDelayS: 1800,
          offDelayS: 1800,
          minCoverage: 0.5,
        },
        reason: `value -2.1234567 (u 0.2) entered the band; on-delay of 1800000 ms held since ${now - 2 * HOUR}`,
      }),
      `Steam turbine ST1 (invented): efficiency drift -2.12 ± 0.40 points (k = 2) over the hour to ${new Date(now - HOUR).toISOString()}, beyond the warning level of -2 points. ${CAUTION}`,
    ]);
    await db.pool.query(
      `INSERT INTO quarantine (source, line, column_name, reason, raw) VALUES ('csv:north', 17, 'ST1.PI-100', 'not a number: "n/a"', '2026-03-01T00:00:00Z,n/a')`,
    );
    // The analysis job stores the drift series the pages show (baseline and drift per result).
    await analyseStored(db.pool, now, HOUR);
    app = await buildTestApp(db.pool);
    base = await app.listen({ port: 0, host: '127.0.0.1' });
    configDir = mkdtempSync(join(tmpdir(), 'isentrope-chromium-'));
    process.env.XDG_CONFIG_HOME = configDir;
    browser = await chromium.launch({
      executablePath: '/usr/bin/chromium',
      args: [
        '--headless',
        '--no-sandbox',
        '--disable-gpu',
        '--disable-background-networking',
        '--disable-component-update',
        '--disable-sync',
        '--no-first-run',
      ],
    });
    context = await browser.newContext({
      acceptDownloads: true,
      viewport: { width: 1280, height: 900 },
    });
    page = await context.newPage();
    page.on('pageerror', (e) => pageErrors.push(e.message));
    page.on('console', (m) => {
      // The first visit is refused with 401 before the sign-in (expected); anything else is a fault.
      if (m.type() === 'error' && !m.text().includes('status of 401')) pageErrors.push(m.text());
    });
  });

  afterAll(async () => {
    await browser?.close();
    await app?.close();
    await db?.drop();
    if (configDir !== undefined) rmSync(configDir, { recursive: true, force: true });
  });

  it('sends an anonymous visitor to sign in, then shows the fleet with the caution', async () => {
    await page.goto(`${base}/`);
    await page.waitForURL(/login\.html/);
    await page.fill('#username', 'eng');
    await page.fill('#password', 'engineer-password');
    await page.click('button[type=submit]');
    await page.waitForSelector('#fleet[data-loaded="true"]');
    const card = page.locator(`[data-machine="${turbineId}"]`);
    // The newest valid result is the computed one; its efficiency is what the fleet shows.
    expect(await card.locator('[data-field="efficiency"]').textContent()).toContain(
      (100 * turbine.isentropicEfficiency!).toFixed(1),
    );
    expect(await page.locator('#caution').textContent()).toBe(CAUTION);
    // Drift and baseline as the analysis job stored them: the computed result against 0.86.
    expect(await card.locator('[data-field="drift"]').textContent()).toBe(
      `−${(100 * (0.86 - turbine.isentropicEfficiency!)).toFixed(2)} points against baseline 86.0 %`,
    );
    expect(await card.locator('[data-field="alerts"]').textContent()).toBe('1 drift alert');
    // A machine whose figures are days old says so instead of showing a band.
    const stale = page.locator(`[data-machine="${compressorId}"]`);
    expect(await stale.getAttribute('data-state')).toBe('no-data');
    expect(await stale.locator('[data-field="state"]').textContent()).toBe('no valid data for 3 days');
    expect(await stale.locator('[data-field="stale"]').textContent()).toContain(
      'gauge-absolute:inletPressure',
    );
    expect(await stale.locator('[data-field="alerts"]').textContent()).toBe('1 instrument alert');
    await page.screenshot({ path: `${ARTIFACTS}fleet.png`, fullPage: true });
  });

  it('opens a machine: the trend is drawn and the h-s chart puts the points where the computation does', async () => {
    await page.click(`[data-machine="${turbineId}"]`);
    await page.waitForSelector('#eff-chart[data-loaded="true"]');
    await page.waitForSelector('#hs-chart[data-loaded="true"]');
    expect(Number(await page.getAttribute('#eff-chart', 'data-points'))).toBeGreaterThan(100);
    expect(await page.locator('#eff-chart canvas').count()).toBeGreaterThan(0);
    const read = async (role: string) => {
      const c = page.locator(`#hs-chart circle[data-role="${role}"]`);
      return {
        s: Number(await c.getAttribute('data-s')),
        h: Number(await c.getAttribute('data-h')),
        cx: Number(await c.getAttribute('cx')),
        cy: Number(await c.getAttribute('cy')),
      };
    };
    const inlet = await read('inlet');
    const ideal = await read('outlet-isentropic');
    const real = await read('outlet');
    // The state points are those of the thermo turbine model (IAPWS-IF97 through packages/thermo).
    expect(inlet.s).toBeCloseTo(turbine.inlet.s, 6);
    expect(inlet.h).toBeCloseTo(turbine.inlet.h, 6);
    expect(ideal.h).toBeCloseTo(turbine.outletIsentropic.h, 6);
    expect(real.h).toBeCloseTo(turbine.outlet.h, 6);
    // Drawn: ideal exit straight below the inlet (same entropy), real exit to its right and above it.
    expect(ideal.cx).toBeCloseTo(inlet.cx, 1);
    expect(ideal.cy).toBeGreaterThan(inlet.cy);
    expect(real.cx).toBeGreaterThan(ideal.cx);
    expect(real.cy).toBeLessThan(ideal.cy);
    expect(await page.locator('#hs-chart path[data-role="dome"]').count()).toBe(1);
    expect(await page.locator('#hs-note').textContent()).toContain('entropy generation');
    // The open alert is on the machine page with its evidence and the caution.
    await page.waitForSelector('#machine-alerts[data-loaded="true"]');
    const item = page.locator(`#machine-alerts [data-alert="${alertId}"]`);
    expect(await item.locator('[data-field="evidence"]').textContent()).toContain(
      '−2.12 ± 0.40 points of efficiency (expanded uncertainty, k = 2',
    );
    expect(await item.locator('[data-field="caution"]').textContent()).toBe(CAUTION);
    expect(await page.locator('#trend-empty').textContent()).toBe('');
    await page.screenshot({ path: `${ARTIFACTS}machine.png`, fullPage: true });
  });

  it('zooms: a drag on the trend asks the server for the narrower range', async () => {
    const before = await page.getAttribute('#eff-chart', 'data-from');
    const over = page.locator('#eff-chart .u-over');
    const box = (await over.boundingBox())!;
    await page.mouse.move(box.x + box.width * 0.4, box.y + box.height / 2);
    await page.mouse.down();
    await page.mouse.move(box.x + box.width * 0.6, box.y + box.height / 2, { steps: 5 });
    await page.mouse.up();
    await page.waitForFunction(
      (b) =>
        (
          globalThis as unknown as {
            document: { getElementById(id: string): { dataset: Record<string, string> } | null };
          }
        ).document.getElementById('eff-chart')?.dataset.from !== b,
      before,
    );
    const from = Date.parse((await page.getAttribute('#eff-chart', 'data-from'))!);
    const to = Date.parse((await page.getAttribute('#eff-chart', 'data-to'))!);
    // 20 % of a 7-day window is about 1.4 days.
    expect((to - from) / HOUR).toBeGreaterThan(24);
    expect((to - from) / HOUR).toBeLessThan(48);
  });

  it('a machine without valid results in range says so, and names its state', async () => {
    // The last day: only flagged results (the valid one is three days old).
    const from = new Date(Date.now() - 24 * HOUR).toISOString();
    await page.goto(`${base}/machine.html?id=${compressorId}&from=${from}&to=${new Date().toISOString()}`);
    await page.waitForSelector('#eff-chart[data-loaded="true"]');
    expect(await page.getAttribute('#kpis', 'data-state')).toBe('no-data');
    expect(await page.locator('#trend-empty').textContent()).toMatch(
      /^No valid result in this range: all \d+ results are flagged/,
    );
    expect(await page.getAttribute('#eff-chart', 'data-valid-points')).toBe('0');
    // The h-s chart draws the newest result with state points and says how old it is.
    await page.waitForSelector('#hs-chart[data-loaded="true"]');
    expect(await page.locator('#hs-note').textContent()).toContain(
      '(3 days ago: the newest with a full state)',
    );
  });

  it('the trend link of an alert (/machines/<slug>?from&to) opens the machine page on that range', async () => {
    const from = new Date(Date.now() - 30 * HOUR).toISOString();
    const to = new Date(Date.now() - 6 * HOUR).toISOString();
    await page.goto(`${base}/machines/st1?from=${encodeURIComponent(from)}&to=${encodeURIComponent(to)}`);
    await page.waitForURL(/machine\.html\?slug=st1/);
    await page.waitForSelector('#eff-chart[data-loaded="true"]');
    expect(await page.getAttribute('#eff-chart', 'data-from')).toBe(from);
    expect(await page.getAttribute('#eff-chart', 'data-to')).toBe(to);
    expect(await page.locator('#title').textContent()).toBe('Steam turbine ST1 (invented)');
  });

  it('acknowledges an alert from the alerts page, then lists what still waits first', async () => {
    await page.goto(`${base}/alerts.html`);
    await page.waitForSelector('#alerts[data-loaded="true"]');
    for (const id of [alertId, instrumentAlertId])
      expect(await page.locator(`tr[data-alert="${id}"] [data-field="caution"]`).textContent()).toBe(CAUTION);
    expect(
      await page.locator(`tr[data-alert="${instrumentAlertId}"] [data-field="evidence"]`).textContent(),
    ).toContain('gauge/absolute mix-up');
    // The detector's reason in readable units: 1800000 ms is 30 min.
    expect(await page.locator(`tr[data-alert="${alertId}"] [data-field="evidence"]`).textContent()).toContain(
      'value -2.123 (u 0.2) entered the band; on-delay of 30 min held since',
    );
    await page.click(`tr[data-alert="${alertId}"] button[data-action="acknowledge"]`);
    await page.waitForSelector(`tr[data-alert="${alertId}"][data-state="active_acknowledged"]`);
    const { rows } = await db.pool.query<{ state: string; acknowledged_by: string }>(
      `SELECT state, acknowledged_by FROM alerts WHERE id = $1`,
      [alertId],
    );
    expect(rows[0]).toEqual({ state: 'active_acknowledged', acknowledged_by: 'eng' });
    expect(await page.locator(`tr[data-alert="${alertId}"] [data-field="handled"]`).textContent()).toMatch(
      /^acknowledged by eng \d{4}-\d\d-\d\d \d\d:\d\d UTC$/,
    );
    // The older, unacknowledged instrument alert now heads the list.
    expect(await page.locator('tr[data-alert]').first().getAttribute('data-alert')).toBe(
      String(instrumentAlertId),
    );
    await page.screenshot({ path: `${ARTIFACTS}alerts.png`, fullPage: true });
  });

  it('shelves an alert for the period chosen and says until when', async () => {
    const row = `tr[data-alert="${instrumentAlertId}"]`;
    await page.selectOption(`${row} select[data-field="shelve-hours"]`, '24');
    const before = Date.now();
    await page.click(`${row} button[data-action="shelve"]`);
    await page.waitForSelector(`${row}[data-state="shelved"]`);
    const { rows } = await db.pool.query<{ until: number; by: string }>(
      `SELECT extract(epoch FROM shelved_until) * 1000 AS until, shelved_by AS by FROM alerts WHERE id = $1`,
      [instrumentAlertId],
    );
    expect(rows[0]!.by).toBe('eng');
    expect(Number(rows[0]!.until) - before).toBeGreaterThan(23.9 * HOUR);
    expect(Number(rows[0]!.until) - before).toBeLessThan(24.1 * HOUR);
    expect(await page.locator(`${row} [data-field="handled"]`).textContent()).toContain(
      'shelved by eng until',
    );
    // Shelved alerts go last.
    expect(await page.locator('tr[data-alert]').last().getAttribute('data-alert')).toBe(
      String(instrumentAlertId),
    );
  });

  it('lists quarantined rows', async () => {
    await page.goto(`${base}/quarantine.html`);
    await page.waitForSelector('#quarantine[data-loaded="true"]');
    expect(await page.locator('#quarantine tbody').textContent()).toContain('not a number');
    expect(await page.locator('#caution').textContent()).toBe(CAUTION);
  });

  it('makes and downloads a monthly CSV report', async () => {
    await page.goto(`${base}/exports.html`);
    await page.waitForSelector('#exports[data-loaded="true"]');
    await page.fill('#month', new Date().toISOString().slice(0, 7));
    await page.click('#make');
    await page.waitForSelector('a[data-download]');
    const [download] = await Promise.all([page.waitForEvent('download'), page.click('a[data-download]')]);
    const path = `${ARTIFACTS}${download.suggestedFilename()}`;
    await download.saveAs(path);
    const csv = readFileSync(path, 'utf8');
    expect(csv.charCodeAt(0)).toBe(0xfeff);
    expect(csv).toContain('st1');
    expect(csv.trimEnd().split('\r\n').at(-1)).toBe(`"# ${CAUTION}"`);
    await page.screenshot({ path: `${ARTIFACTS}exports.png`, fullPage: true });
  });

  it('changes the password on the Account page reached from the header, saying what was wrong each time', async () => {
    const before = pageErrors.length;
    await page.goto(`${base}/quarantine.html`);
    await page.waitForSelector('#quarantine[data-loaded="true"]');
    await page.click('#who a[href="/account.html"]');
    await page.waitForSelector('#account[data-loaded="true"]');
    expect(await page.locator('#caution').textContent()).toBe(CAUTION);
    expect(await page.locator('#account-who').textContent()).toBe('Signed in as eng, role engineer.');
    const submit = async (current: string, next: string, repeat: string, state: string) => {
      await page.fill('#current-password', current);
      await page.fill('#new-password', next);
      await page.fill('#repeat-password', repeat);
      await page.click('#password-form button[type=submit]');
      await page.waitForSelector(`#password-form[data-state="${state}"]`);
    };
    const error = page.locator('#password-error');
    await submit('engineer-password', 'a-new-password-1', 'a-new-password-2', 'refused');
    expect(await error.textContent()).toBe(
      'The two new passwords differ; type the same new password in both fields.',
    );
    expect(await page.getAttribute('#repeat-password', 'aria-invalid')).toBe('true');
    await submit('not-the-password', 'a-new-password-1', 'a-new-password-1', 'refused');
    expect(await error.textContent()).toMatch(
      /^The current password is wrong; type the password you sign in with/,
    );
    expect(await page.getAttribute('#current-password', 'aria-invalid')).toBe('true');
    await submit('engineer-password', 'too-short', 'too-short', 'refused');
    expect(await error.textContent()).toBe(
      'The new password is too short (length 9); choose one of at least 12 characters.',
    );
    await submit('engineer-password', 'engineer-password', 'engineer-password', 'refused');
    expect(await error.textContent()).toContain('the same as the current one');
    await submit('engineer-password', 'a-new-password-1', 'a-new-password-1', 'changed');
    expect(await error.textContent()).toBe('');
    expect(await page.locator('#password-done').textContent()).toBe(
      'Password changed. No other browser session was open; this one stays signed in.',
    );
    expect(await page.inputValue('#current-password')).toBe('');
    // This session stays signed in; the old password no longer signs in, the new one does.
    await page.reload();
    await page.waitForSelector('#account[data-loaded="true"]');
    expect(await page.locator('#account-who').textContent()).toBe('Signed in as eng, role engineer.');
    const login = (password: string) =>
      app.inject({ method: 'POST', url: '/api/auth/login', payload: { username: 'eng', password } });
    expect((await login('engineer-password')).statusCode).toBe(401);
    expect((await login('a-new-password-1')).statusCode).toBe(200);
    // Chromium logs each refusal (400, 403) as a failed load: expected here, anything else is not.
    const logged = pageErrors.splice(before);
    expect(logged.filter((m) => !/status of 40[03]/.test(m))).toEqual([]);
    expect(logged.length).toBeGreaterThanOrEqual(3);
    await page.screenshot({ path: `${ARTIFACTS}account.png`, fullPage: true });
  });

  it('fits a phone: no page is wider than its 390 px screen', async () => {
    const phone = await browser.newContext({
      viewport: { width: 390, height: 844 },
      storageState: await context.storageState(),
    });
    const small = await phone.newPage();
    small.on('pageerror', (e) => pageErrors.push(e.message));
    try {
      for (const [name, path, ready] of [
        ['fleet', '/', '#fleet[data-loaded="true"]'],
        ['machine', `/machine.html?id=${turbineId}`, '#hs-chart[data-loaded="true"]'],
        ['alerts', '/alerts.html', '#alerts[data-loaded="true"]'],
        ['quarantine', '/quarantine.html', '#quarantine[data-loaded="true"]'],
        ['account', '/account.html', '#account[data-loaded="true"]'],
      ] as const) {
        await small.goto(`${base}${path}`);
        await small.waitForSelector(ready);
        const width = await small.evaluate(
          () =>
            (globalThis as unknown as { document: { documentElement: { scrollWidth: number } } }).document
              .documentElement.scrollWidth,
        );
        expect(width, name).toBeLessThanOrEqual(390);
        await small.screenshot({ path: `${ARTIFACTS}phone-${name}.png`, fullPage: true });
      }
    } finally {
      await phone.close();
    }
  });

  it('ran every page without a script error or a refused resource (CSP)', () => {
    expect(pageErrors).toEqual([]);
  });
});
