/**
 * The editor's keys: one table, shown by the shortcut list (? opens it); lib/keys.ts handles the
 * keys it lists. Only the list's chunk carries the table, not the page's entry script.
 */

export interface Shortcut {
  /** As shown in the list. */
  readonly keys: string;
  readonly does: string;
  readonly group: 'Listening' | 'Moving' | 'Selecting' | 'Working' | 'Files';
}

export const SHORTCUTS: readonly Shortcut[] = [
  { keys: 'Space', does: 'Play / stop', group: 'Listening' },
  { keys: 'B', does: 'Listen to the original or the corrected version', group: 'Listening' },
  { keys: 'L', does: 'Loop the selection', group: 'Listening' },
  { keys: '← / →', does: 'Play position 1 s back / on', group: 'Moving' },
  { keys: 'Alt + ← / →', does: 'Play position 10 ms back / on', group: 'Moving' },
  { keys: 'Home / End', does: 'Play position to the start (of the selection) / the end', group: 'Moving' },
  { keys: 'Page Up / Page Down', does: 'Scroll the view by half its width', group: 'Moving' },
  { keys: '+ / −', does: 'Zoom in / out', group: 'Moving' },
  { keys: '0', does: 'Show the whole recording', group: 'Moving' },
  { keys: 'Shift + ↑ / ↓', does: 'Waveform amplitude larger / smaller', group: 'Moving' },
  { keys: 'M', does: 'Marker at the play position', group: 'Moving' },
  { keys: '[ / ]', does: 'Previous / next marker', group: 'Moving' },
  { keys: 'Shift + ← / →', does: 'Stretch the selection from the play position by 1 s', group: 'Selecting' },
  { keys: 'I / O', does: 'Selection starts / ends at the play position', group: 'Selecting' },
  { keys: 'Ctrl + A', does: 'Select the whole recording', group: 'Selecting' },
  { keys: 'Esc', does: 'Clear the selection (or close a dialog)', group: 'Selecting' },
  { keys: 'R', does: 'Render the preview', group: 'Working' },
  { keys: 'C', does: 'Compare before and after', group: 'Working' },
  { keys: 'E', does: 'Export the corrected recording', group: 'Working' },
  { keys: 'Ctrl + Z / Ctrl + Shift + Z', does: 'Undo / redo a change to the corrections', group: 'Working' },
  { keys: 'Ctrl + O', does: 'Open a recording', group: 'Files' },
  { keys: 'Ctrl + S', does: 'Save the session', group: 'Files' },
  { keys: '?', does: 'This list', group: 'Files' },
];
