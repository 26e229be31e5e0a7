// Types of scripts/e2e/harness.mjs for the TypeScript tests.
import type { ChildProcess } from 'node:child_process';
import type { BrowserContext, FrameLocator, Locator, Page } from 'playwright-core';

/** Project root. */
export declare const ROOT: string;
/** The git-ignored tools folder. */
export declare const TOOLS_DIR: string;
/** Chromium flags for headless runs. */
export declare const CHROMIUM_ARGS: string[];
/** Built-in theme ids by kind. */
export declare const THEMES: { light: string; dark: string; 'high-contrast': string };
/** Settings every profile starts from. */
export declare const BASE_SETTINGS: Record<string, unknown>;

/** Installs code-server and checks chromium; throws with a clear message when it cannot. */
export declare function ensureTools(opts?: { force?: boolean }): { codeServerBin: string; chromium: string; version: string };

/** A code-server profile. */
export interface Profile {
  dir: string;
  userData: string;
  extensions: string;
  config: string;
  settingsFile: string;
}

/** A running code-server. */
export interface CodeServer {
  url: string;
  port: number;
  workspace: string;
  child: ChildProcess;
  log: string[];
  workbenchUrl: string;
  stop(): Promise<void>;
}

/** Builds dist/ and packages the .vsix. */
export declare function buildAndPackage(outVsix?: string): { vsix: string; bytes: number };
/** Creates a fresh profile in `dir`. */
export declare function createProfile(dir: string, settings?: Record<string, unknown>): Profile;
/** Rewrites the profile's user settings over the base settings. */
export declare function writeSettings(profile: Profile, settings: Record<string, unknown>): void;
/** Installs a .vsix into the profile. */
export declare function installExtension(codeServerBin: string, profile: Profile, vsix: string): string;
/** Starts code-server; resolves once it listens. */
export declare function startCodeServer(o: {
  codeServerBin: string;
  profile: Profile;
  workspace: string;
  env?: Record<string, string>;
  port?: number;
  onLog?: (line: string) => void;
}): Promise<CodeServer>;
/** Launches headless chromium with a fresh profile. */
export declare function launchBrowser(chromium: string): Promise<{ context: BrowserContext; close(): Promise<void> }>;
/** Opens the workbench and waits for it. */
export declare function openWorkbench(page: Page, workbenchUrl: string): Promise<void>;
/** Runs a command from the palette by its title, with retries. */
export declare function runCommand(page: Page, title: string, opts?: { attempts?: number; opensQuickInput?: boolean }): Promise<void>;
/**
 * Runs `attempt(i)` up to `attempts` times until it resolves; after a failure presses Escape and waits `pause_ms(i)`
 * (default 1000 ms); when all fail, throws an Error with the message `failure(last error's message)`.
 */
export declare function retryOnPage<T>(
  page: Page,
  attempts: number,
  attempt: (i: number) => Promise<T>,
  failure: (lastMessage: string) => string,
  pause_ms?: (i: number) => number,
): Promise<T>;
/** Runs "Residuum: Open Log Analysis" and answers its file dialog with an absolute path. */
export declare function openLogViaDialog(page: Page, file: string): Promise<void>;
/** Answers VS Code's simple file dialog (open or save) with an absolute path. */
export declare function answerFileDialog(page: Page, file: string): Promise<void>;
/** Types `value` into a quick input until it stays there (the simple dialog may overwrite it with its default). */
export declare function fillAndHold(page: Page, input: Locator, value: string, timeout_ms?: number): Promise<void>;
/** Switches the colour theme through the palette. */
export declare function pickColorTheme(page: Page, themeLabel: string): Promise<void>;
/** The visible Residuum panel's inner document (the last visible iframe.webview.ready > #active-frame). */
export declare function webviewFrame(page: Page): FrameLocator;
/** Waits for and parses the in-host self test result. */
export declare function waitForSelfTest(
  file: string,
  timeout_ms: number,
): Promise<{ summary: string; passed: number; failed: number; results: { name: string; ok: boolean; detail: string; ms: number }[] }>;
/** Copies a folder into a scratch folder under .tools/runs/. */
export declare function scratchCopy(src: string, name: string): string;
