/**
 * The seam between the analysis panel (panel.ts, the editor's) and the notes and code links (notes.ts,
 * codeLinks.ts): the panel calls these hooks, the notes controller sets them at activation. Kept in its own file so
 * panel.ts needs only three one-line calls and no knowledge of notes.
 */
import type { NotesAddMessage, NotesDeleteMessage, NotesEditMessage, NotesRequestMessage, CodeGotoMessage, ResetConfirmMessage, ResetUnconfirmMessage } from '../protocol';
import type { AnalysisPanel } from './panel';

/** Messages of the panel that the notes controller answers. */
export type NotesPanelMessage = NotesRequestMessage | NotesAddMessage | NotesEditMessage | NotesDeleteMessage | CodeGotoMessage
  | ResetConfirmMessage | ResetUnconfirmMessage;

/** Hooks called by every analysis panel (unset: ignored). */
export const notesPanelHooks: {
  /** A notes or code-link message from the panel's webview. */
  onMessage?: (panel: AnalysisPanel, message: NotesPanelMessage) => void;
  /** The panel's analysis finished (or was re-read). */
  onAnalysed?: (panel: AnalysisPanel) => void;
  /** The panel closed. */
  onDisposed?: (panel: AnalysisPanel) => void;
} = {};
