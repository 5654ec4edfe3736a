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
  const remove = () => {
    try {
      rmSync(profile, { recursive: true, force: true, maxRetries: 5, retryDelay: 200 });
    } catch {
      /* left in the temp folder */
    }
  };
  context.on('close', () => {
    // Chromium still writes a few files into the profile as it exits (about 0.5 MB were left each time when it was
    // removed only here): remove it now and once more two seconds later, and never fail a test run over it.
    remove();
    setTimeout(remove, 2_000);
  });
  return context;
}
