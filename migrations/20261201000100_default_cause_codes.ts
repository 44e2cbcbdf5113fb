/** The starting list of cause codes (admins edit it afterwards). Lockstep's own wording. */
import type { Knex } from 'knex';

export const DEFAULT_CAUSE_CODES: { code: string; title: string; category: string }[] = [
	{ code: 'HW-RFM', title: 'RF match or generator: tuning drift, worn capacitor, reflected power', category: 'hardware' },
	{ code: 'HW-MFC', title: 'Mass-flow controller out of calibration or drifting', category: 'hardware' },
	{ code: 'HW-LEAK', title: 'Vacuum or seal leak (air ingress)', category: 'hardware' },
	{ code: 'HW-HE', title: 'Backside helium leak or chuck sealing problem', category: 'hardware' },
	{ code: 'HW-THR', title: 'Throttle valve or pressure control fault', category: 'hardware' },
	{ code: 'HW-SWAP', title: 'Chamber part replaced; chamber not yet matched', category: 'hardware' },
	{ code: 'CON-WIN', title: 'Viewport window deposits (clouding)', category: 'consumable' },
	{ code: 'CON-RING', title: 'Edge ring or liner wear at end of life', category: 'consumable' },
	{ code: 'PRC-SEAS', title: 'Wall seasoning after wet clean not complete', category: 'process' },
	{ code: 'PRC-IDLE', title: 'First-wafer effect after idle time', category: 'process' },
	{ code: 'PRC-INC', title: 'Incoming wafer or upstream variation', category: 'process' },
	{ code: 'PRC-RCP', title: 'Recipe changed or edited', category: 'process' },
	{ code: 'SEN-OES', title: 'Spectrometer or fibre problem (gain, alignment)', category: 'sensor' },
	{ code: 'SEN-TOOL', title: 'Tool sensor reading wrong or missing', category: 'sensor' },
	{ code: 'FA-LIMIT', title: 'Statistical false alarm: no physical cause found', category: 'false_alarm' },
	{ code: 'FA-BASE', title: 'Baseline no longer representative; rebuild needed', category: 'false_alarm' },
	{ code: 'OTH', title: 'Other (explain in the comment)', category: 'other' }
];

export async function up(knex: Knex): Promise<void> {
	const t = Date.now();
	await knex('cause_codes')
		.insert(DEFAULT_CAUSE_CODES.map((c) => ({ ...c, active: true, created_at: t })))
		.onConflict('code')
		.ignore();
}

export async function down(knex: Knex): Promise<void> {
	await knex('cause_codes').whereIn('code', DEFAULT_CAUSE_CODES.map((c) => c.code)).delete();
}
