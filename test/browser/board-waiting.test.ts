/**
 * A live board whose Redis does not answer yet, in real headless Chromium: the page loads at once,
 * says above the alerts what it waits for (the retry line the terminal shows), its header says
 * "waiting for Kafka/Redis" instead of "live", and the caution is visible. Nothing listens on the
 * ports given (23520-23521, below Linux's ephemeral range 32768-60999), so the board stays waiting for the whole test.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { chromium, type Browser } from 'playwright-core';
import { startDemo, type DemoProcess } from './demo-process.js';

const ARGS = ['--headless', '--no-sandbox', '--disable-gpu', '--no-first-run'];
const CLOSED_REDIS_PORT = 23_520;
const CLOSED_KAFKA_PORT = 23_521;

describe('live board page while Kafka/Redis do not answer', () => {
  let board: DemoProcess;
  let browser: Browser;

  beforeAll(async () => {
    board = await startDemo(
      ['--brokers', `127.0.0.1:${CLOSED_KAFKA_PORT}`, '--redis', `redis://127.0.0.1:${CLOSED_REDIS_PORT}`],
      'board',
    );
    browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args: ARGS });
  });
  afterAll(async () => {
    await browser?.close();
    await board?.stop();
  });

  it('shows what it waits for and never claims to be live', async () => {
    const page = await browser.newPage();
    const problems: string[] = [];
    page.on('pageerror', (e) => problems.push(e.message));
    await page.goto(`${board.url}/`);
    const waiting = page.locator('#waiting');
    await waiting.waitFor({ state: 'visible', timeout: 20_000 });
    expect(await waiting.textContent()).toMatch(
      new RegExp(
        `^Waiting for Kafka/Redis: redis 127\\.0\\.0\\.1:${CLOSED_REDIS_PORT}: connection refused; retrying in [\\d.]+ s\\. Alerts appear here once the board can read them\\.$`,
      ),
    );
    await expect
      .poll(() => page.locator('#link').textContent(), { timeout: 10_000 })
      .toBe('waiting for Kafka/Redis');
    expect(await page.locator('#caution').isVisible()).toBe(true);
    expect(problems).toEqual([]);
  });
});
