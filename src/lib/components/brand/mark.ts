/**
 * Lockstep's mark: two identical step traces, stacked, rising at the same instant — chambers that
 * run the same recipe in step. Drawn on a 32 × 32 grid; shared by Wordmark.svelte and
 * static/favicon.svg (keep the two in step when the drawing changes).
 */
export const MARK_VIEWBOX = '0 0 32 32';
export const MARK_TILE = { x: 1, y: 1, width: 30, height: 30, rx: 8 };
export const MARK_STROKE = 3;
export const MARK_TRACES = [14.5, 23.5].map((y) => `M6.5 ${y}H14V${y - 6}H25.5`);
