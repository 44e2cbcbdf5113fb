/** A large, valid wafer-summary CSV written straight to disk (the write-lock test and bench/hardening.ts). */
import fs from 'node:fs';

/**
 * `rows` rows × `features` feature columns (OES channels plus pressure and reflected power) for chamber
 * `chamber`, recipe BIG-ETCH, alternating steps, one minute apart from `startMs` (default 2026-11-01) (≈ 2.3 kB a row at 250 features).
 */
export function writeLargeCsv(file: string, rows: number, features: number, chamber = 'PM1', prefix = 'BW', startMs = Date.UTC(2026, 10, 1)): void {
	const names = Array.from({ length: features - 2 }, (_, j) => `oes_${(200 + j * 2.5).toFixed(1)}`);
	const out = fs.openSync(file, 'w');
	try {
		fs.writeSync(out, ['wafer_id', 'lot_id', 'chamber_id', 'recipe', 'step', 'processed_at', ...names, 'pressure_mtorr', 'rf_reflected_w'].join(',') + '\n');
		const t0 = startMs;
		let buf: string[] = [];
		for (let i = 0; i < rows; i++) {
			const v = names.map((_, j) => (1000 + j + ((i * 7 + j * 13) % 97) / 10).toFixed(3));
			buf.push([`${prefix}${i}`, `BL${i >> 5}`, chamber, 'BIG-ETCH', i % 2 ? 'main' : 'over', new Date(t0 + i * 60_000).toISOString(), ...v, '15.07', '2.31'].join(','));
			if (buf.length === 1000) {
				fs.writeSync(out, buf.join('\n') + '\n');
				buf = [];
			}
		}
		if (buf.length) fs.writeSync(out, buf.join('\n') + '\n');
	} finally {
		fs.closeSync(out);
	}
}
