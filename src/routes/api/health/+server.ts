import { json } from '@sveltejs/kit';
import { db } from '$lib/server/db';

/**
 * Liveness and the database, for load balancers and the test harness: it must answer and it must take
 * a write. The write is a no-op UPDATE in a transaction that commits — it still needs the write lock
 * (SQLite) or a writable database (read-only file, full disk, a PostgreSQL standby), so health is not
 * ok while sign-ins and acknowledgements would fail (issue 13: it said ok before).
 */
export async function GET() {
	const k = db();
	try {
		await k.raw('select 1');
	} catch {
		return json({ ok: false, error: 'database unreachable' }, { status: 503 });
	}
	const t = performance.now();
	try {
		await k.transaction(async (trx) => {
			await trx('ingest_files').where('id', -1).update({ id: -1 });
		});
	} catch (e) {
		const reason = e instanceof Error ? e.message.split('\n')[0].slice(0, 200) : String(e);
		return json({ ok: false, error: `database cannot be written: ${reason}` }, { status: 503 });
	}
	return json({ ok: true, writeMs: Math.round(performance.now() - t) });
}
