/**
 * One headless Chromium set-up for the report tests: where the browser is, whether the tests run here,
 * a page opened offline with its console errors and requests collected, and what spills past the window.
 */
import { existsSync } from 'node:fs';
import { chromium, type Browser, type Page } from 'playwright-core';

export const CHROMIUM = '/usr/bin/chromium';

/** Under CI the set-up script installs chromium, so a missing browser there is a failure, not a skip. */
export const browserRunsHere = existsSync(CHROMIUM) || (process.env.CI ?? '') !== '';

/** Chromium without a GPU, a sandbox or any background traffic (the pages must request nothing but themselves). */
export function launchChromium(): Promise<Browser> {
  return chromium.launch({
    executablePath: CHROMIUM,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
  });
}

/** A page opened at `url` with every console error, page error and request recorded from the start. */
export async function openPage(browser: Browser, url: string, width: number): Promise<{ page: Page; errors: string[]; requests: string[] }> {
  const page = await browser.newPage({ viewport: { width, height: 900 } });
  const errors: string[] = [];
  const requests: string[] = [];
  page.on('console', (message) => {
    if (message.type() === 'error') errors.push(message.text());
  });
  page.on('pageerror', (error) => errors.push(error.message));
  page.on('request', (request) => requests.push(request.url()));
  await page.goto(url, { waitUntil: 'load' });
  return { page, errors, requests };
}

/**
 * How far the page scrolls sideways, and by how much each element matching `selector` passes the
 * window's right edge (only those that do). Written as page source: the tests are typed for Node, without the DOM.
 */
export function overflowOf(page: Page, selector: string): Promise<{ page: number; boxes: number[] }> {
  return page.evaluate(`({
    page: document.documentElement.scrollWidth - window.innerWidth,
    boxes: [...document.querySelectorAll(${JSON.stringify(selector)})].map((el) => Math.ceil(el.getBoundingClientRect().right) - window.innerWidth).filter((over) => over > 0),
  })`) as Promise<{ page: number; boxes: number[] }>;
}
