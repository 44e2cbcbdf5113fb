/**
 * The cause-code categories and their labels: stored by the server (src/lib/server/cause-codes.ts) and
 * shown by the acknowledgement form, so they live outside $lib/server where both can import them.
 */
export const CAUSE_CATEGORIES = {
	hardware: 'Hardware',
	consumable: 'Consumable',
	process: 'Process',
	sensor: 'Sensor',
	false_alarm: 'False alarm',
	other: 'Other'
} as const;
export type CauseCategory = keyof typeof CAUSE_CATEGORIES;
