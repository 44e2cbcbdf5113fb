/**
 * Create an API token from the command line, for scripted setups:
 *   npm run token:create -- --user ada --scope read,write [--name "nightly qualification"]
 *   npm run token:create -- --service --scope ingest,register --name de04-host
 * `--user` makes a personal token that acts as that person with their role; `--service` a service token
 * for a tool host (read, ingest, register only). The token is printed once, alone on stdout, so that
 * `TOKEN=$(npm run -s token:create -- …)` captures it; the table keeps only its hash.
 */
import { parseArgs } from 'node:util';
import { createApiToken, isTokenScope, validateNewToken } from '../src/lib/server/api-tokens.ts';
import { closeDb, db, migrateLatest } from '../src/lib/server/db.ts';
import type { Role } from '../src/lib/server/roles.ts';
import { getUserByUsername } from '../src/lib/server/users.ts';

const { values } = parseArgs({
	options: {
		user: { type: 'string' },
		service: { type: 'boolean', default: false },
		scope: { type: 'string' },
		name: { type: 'string' }
	}
});

function refuse(message: string): void {
	console.error(message);
	process.exitCode = 2;
}

async function main() {
	if (!values.user === !values.service) return refuse('Give either --user NAME (a personal token) or --service (a tool host’s token).');
	const scopes = (values.scope ?? '').split(',').map((s) => s.trim()).filter(Boolean);
	await migrateLatest(db());
	let owner: { id: string; role: Role } | null = null;
	if (values.user) {
		const u = await getUserByUsername(values.user.trim().toLowerCase());
		if (!u) return refuse(`--user: there is no user ${values.user} (create one with npm run user:create).`);
		if (u.disabled) return refuse(`--user: ${u.username} is disabled.`);
		owner = { id: u.id, role: u.role };
	}
	const name = values.name ?? (values.user ? `${values.user} (command line)` : '');
	const errors = validateNewToken({ name, scopes }, owner?.role ?? null);
	for (const [field, message] of Object.entries(errors)) refuse(`--${field}: ${message}`);
	if (Object.keys(errors).length) return;
	const t = await createApiToken({ name, scopes: scopes.filter(isTokenScope), createdBy: owner?.id ?? null, ownerId: owner?.id ?? null });
	console.error(`Created ${owner ? `a personal token of ${values.user}` : 'a service token'} “${name}” (${scopes.join(', ')}), id ${t.id}. It is shown only now:`);
	console.log(t.token);
}

main()
	.catch((e) => {
		console.error(e instanceof Error ? e.message : e);
		process.exitCode = 1;
	})
	.finally(() => closeDb());
