// The side panels found at build time (rollup.config.mjs makes this module from components/*-panel.ts).
declare module 'virtual:strata-panels' {
  export interface PanelEntry {
    /** File name without `-panel.ts`, e.g. `calibration`. */
    id: string;
    /** Tab label: the module's `panelLabel`, else made from the id. */
    label: string;
    /** The custom element the module defines (read from its source at build time). */
    tag: string;
    /** The module exports `panelWide = true`: its figures take the main area beside the image. */
    wide: boolean;
    /** Loads the panel's module (which defines its custom element). */
    load: () => Promise<unknown>;
  }
  export const panels: PanelEntry[];
}
