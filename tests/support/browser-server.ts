/**
 * One headless Chromium for the whole e2e run (vitest globalSetup of the e2e project): each spec file connects to it
 * (support/browser.ts launch) instead of starting its own browser, and makes its own contexts, which it closes.
 */
import { chromium } from 'playwright-core';
import type { TestProject } from 'vitest/node';
import { CHROMIUM_ARGS, CHROMIUM_EXECUTABLE, CHROMIUM_IGNORED_DEFAULTS } from './browser-args';

declare module 'vitest' {
  export interface ProvidedContext {
    chromiumWsEndpoint: string;
  }
}

export default async function setup(project: TestProject): Promise<() => Promise<void>> {
  const server = await chromium.launchServer({ executablePath: CHROMIUM_EXECUTABLE, headless: true, args: CHROMIUM_ARGS, ignoreDefaultArgs: CHROMIUM_IGNORED_DEFAULTS });
  project.provide('chromiumWsEndpoint', server.wsEndpoint());
  return async () => {
    await server.close();
  };
}
