/**
 * The analysis panel's HTML: a strict Content Security Policy with a fresh nonce per render, one bundled script and
 * the bundled styles from dist/. No workspace text goes into this HTML: everything from the log reaches the webview
 * by message and is set with `textContent` there.
 */
import { randomUUID } from 'node:crypto';
import * as vscode from 'vscode';

/** A fresh script nonce (122 random bits from crypto.randomUUID, dashes dropped). */
export function makeNonce(): string {
  return randomUUID().replace(/-/g, '');
}

/** The Content-Security-Policy for a webview whose resources come from `cspSource`. */
export function contentSecurityPolicy(cspSource: string, nonce: string): string {
  return [
    "default-src 'none'",
    `img-src ${cspSource} data:`,
    // 'unsafe-inline' only because @vscode/webview-ui-toolkit (webview/ui.ts) sets inline styles on its elements;
    // scripts stay nonce-only, so injected markup still cannot run. Drop it when ui.ts moves off the toolkit.
    `style-src ${cspSource} 'unsafe-inline'`,
    `font-src ${cspSource}`,
    `script-src 'nonce-${nonce}'`,
  ].join('; ');
}

/** The webview options of the panel: scripts on, resources only from dist/. */
export function webviewOptions(extensionUri: vscode.Uri): vscode.WebviewOptions & vscode.WebviewPanelOptions {
  return { enableScripts: true, localResourceRoots: [vscode.Uri.joinPath(extensionUri, 'dist')], enableFindWidget: true };
}

/** The panel's HTML for `webview`. */
export function panelHtml(webview: vscode.Webview, extensionUri: vscode.Uri): string {
  const nonce = makeNonce();
  const dist = (file: string): string => webview.asWebviewUri(vscode.Uri.joinPath(extensionUri, 'dist', file)).toString();
  return `<!DOCTYPE html>
<html lang="en">
<head>
<meta http-equiv="Content-Security-Policy" content="${contentSecurityPolicy(webview.cspSource, nonce)}">
<meta charset="UTF-8">
<meta name="viewport" content="width=device-width, initial-scale=1.0">
<link rel="stylesheet" href="${dist('uPlot.min.css')}">
<link rel="stylesheet" href="${dist('webview.css')}">
<title>Residuum</title>
</head>
<body>
<main id="app" data-state="loading" aria-busy="true"><p class="status" role="status">Reading the log…</p></main>
<script nonce="${nonce}" src="${dist('webview.js')}"></script>
</body>
</html>`;
}
