/**
 * The webview side of the VS Code API, acquired once and kept in this module (never on a global), with typed
 * state. Outside VS Code (a plain browser for development) a stand-in logs messages and keeps state in memory.
 */
import type { PersistedState, WebviewToHostMessage } from '../extension/protocol';

/** What the panel uses of the webview API. */
export interface PanelApi {
  post(message: WebviewToHostMessage): void;
  getState(): PersistedState | undefined;
  setState(state: PersistedState): void;
}

function acquire(): PanelApi {
  if (typeof acquireVsCodeApi === 'function') {
    const api = acquireVsCodeApi<PersistedState>();
    return {
      post: (m) => api.postMessage(m),
      getState: () => api.getState(),
      setState: (s) => void api.setState(s),
    };
  }
  let state: PersistedState | undefined;
  return {
    post: (m) => console.log('post', m),
    getState: () => state,
    setState: (s) => (state = s),
  };
}

/** The one API object of this webview. */
export const panelApi: PanelApi = acquire();
