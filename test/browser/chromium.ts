// Launch Debian's Chromium headless through playwright-core, with a fresh profile each time.

import { chromium, type BrowserContext } from 'playwright-core';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

export const CHROMIUM = process.env.CHROMIUM_PATH ?? '/usr/bin/chromium';

export function chromiumAvailable(): boolean {
  return existsSync(CHROMIUM);
}

/** A headless Chromium on a fresh profile folder, which is deleted when the context closes (about 15 MB each). */
export async function launch(): Promise<BrowserContext> {
  const profile = mkdtempSync(join(tmpdir(), 'shapekin-chromium-'));
  const context = await chromium.launchPersistentContext(profile, {
    executablePath: CHROMIUM,
    headless: true,
    viewport: { width: 1280, height: 800 },
    args: [
      '--no-sandbox',
      '--disable-gpu',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
      '--no-first-run',
      '--disable-quic',
    ],
  });
  context.on('close', () => {
    // Chromium may still be writing into the profile as it exits: retry, and never fail a test run over it.
    try {
      rmSync(profile, { recursive: true, force: true, maxRetries: 5, retryDelay: 200 });
    } catch {
      /* left in the temp folder */
    }
  });
  return context;
}
