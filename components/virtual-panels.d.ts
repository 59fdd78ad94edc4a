// The side panels found at build time (rollup.config.mjs makes this module from components/*-panel.ts).
declare module 'virtual:strata-panels' {
  export interface PanelEntry {
    /** File name without `-panel.ts`, e.g. `calibration`. */
    id: string;
    /** Tab label made from the id, unless the module exports `panelLabel`. */
    label: string;
    /** Loads the panel's module (which defines its custom element). */
    load: () => Promise<unknown>;
  }
  export const panels: PanelEntry[];
}
