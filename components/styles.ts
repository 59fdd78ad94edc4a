// Shared look of the controls in every panel: dark, calm, dense, with a visible focus ring.
import { css } from 'lit';

export const controlStyles = css`
  :host { color: var(--text); font: inherit; }
  *:focus-visible { outline: 2px solid var(--focus); outline-offset: 1px; }
  button, select, input {
    font: inherit; font-size: 13px; color: var(--text); background: #212b35; border: 1px solid var(--line);
    border-radius: 3px; padding: 3px 8px; min-height: 26px; box-sizing: border-box;
  }
  button { cursor: pointer; }
  button:hover { background: #2a3642; }
  button[aria-pressed='true'], button.on { background: #34475a; border-color: var(--accent-2); color: #fff; }
  button:disabled { opacity: 0.5; cursor: default; }
  button.danger { border-color: #6b3434; }
  button.danger:hover { background: #4a2626; }
  input[type='number'] { width: 7em; padding: 3px 4px; font-variant-numeric: tabular-nums; }
  input[type='checkbox'] { min-height: 0; accent-color: var(--accent-2); }
  label { color: var(--muted); font-size: 12px; display: inline-flex; align-items: center; gap: 4px; }
  .sep { width: 1px; align-self: stretch; background: var(--line); margin: 0 4px; }
  .muted { color: var(--muted); }
  .num { font-variant-numeric: tabular-nums; }
`;

/** The layout every side panel shares: padded host, sections with a rule, small headings, rows of controls. */
export const panelStyles = css`
  :host { display: block; padding: 10px 12px; font-size: 13px; }
  section { border-bottom: 1px solid var(--line); padding: 8px 0 10px; }
  h3 { margin: 0 0 6px; font-size: 13px; font-weight: 600; }
  .row { display: flex; flex-wrap: wrap; gap: 6px; align-items: center; margin: 4px 0; }
`;

/** A panel that is a list under a bar of actions (the library, the diagnostics log). */
export const listPanelStyles = css`
  :host { display: flex; flex-direction: column; min-height: 0; }
  .actions { display: flex; gap: 6px; padding: 8px; border-bottom: 1px solid var(--line); align-items: center; }
  .actions .count { margin-left: auto; color: var(--muted); font-size: 12px; }
`;

/**
 * The wide layout of a panel with figures (attribute `wide`, set by the shell when the panel's
 * module exports `panelWide`): `.stage` (the figures, in the main area beside the image) and
 * `.side` (controls and key numbers, a 340 px column), each scrolling on its own. When not wide,
 * both wrappers dissolve and the sections stack in the order their classes `o1`…`o8` give.
 */
export const wideStyles = css`
  :host([wide]) { display: grid; grid-template-columns: minmax(0, 1fr) 340px; grid-template-rows: minmax(0, 1fr);
    padding: 0; flex: 1 1 auto; min-height: 0; overflow: hidden; }
  :host([wide]) .stage { grid-column: 1; grid-row: 1; overflow-y: auto; min-height: 0; padding: 8px 8px 16px; overflow-anchor: none; }
  :host([wide]) .side { grid-column: 2; grid-row: 1; overflow-y: auto; min-height: 0; padding: 4px 8px 24px 10px; border-left: 1px solid var(--line); overflow-anchor: none; }
  :host(:not([wide])) { display: flex; flex-direction: column; }
  :host(:not([wide])) .stage, :host(:not([wide])) .side { display: contents; }
  .o1 { order: 1; } .o2 { order: 2; } .o3 { order: 3; } .o4 { order: 4; } .o5 { order: 5; } .o6 { order: 6; } .o7 { order: 7; } .o8 { order: 8; }
`;
