import { json } from '@sveltejs/kit';
import { db } from '$lib/server/db';

/** Liveness and database reachability, for load balancers and the test harness. */
export async function GET() {
	try {
		await db().raw('select 1');
		return json({ ok: true });
	} catch (e) {
		return json({ ok: false, error: 'database unreachable' }, { status: 503 });
	}
}
