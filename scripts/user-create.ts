/**
 * Create a user from the command line (the first admin, typically):
 *   npm run user:create -- --username ada --name "Ada Field" --role admin [--password '…']
 * Without --password a random one is generated and printed once.
 */
import { randomBytes } from 'node:crypto';
import { parseArgs } from 'node:util';
import { closeDb, db, migrateLatest } from '../src/lib/server/db.ts';
import { isRole } from '../src/lib/server/roles.ts';
import { createUser, getUserByUsername, validateNewUser } from '../src/lib/server/users.ts';

const { values } = parseArgs({
	options: {
		username: { type: 'string' },
		name: { type: 'string' },
		role: { type: 'string', default: 'admin' },
		password: { type: 'string' }
	}
});

async function main() {
	const username = (values.username ?? '').trim().toLowerCase();
	const password = values.password ?? randomBytes(12).toString('base64url');
	const input = { username, displayName: values.name ?? username, password, role: values.role ?? 'admin' };
	const errors = validateNewUser(input);
	if (Object.keys(errors).length) {
		for (const [field, message] of Object.entries(errors)) console.error(`--${field}: ${message}`);
		process.exitCode = 2;
		return;
	}
	await migrateLatest(db());
	if (await getUserByUsername(username)) {
		console.error(`--username: ${username} exists already`);
		process.exitCode = 2;
		return;
	}
	if (!isRole(input.role)) throw new Error('unreachable');
	await createUser({ ...input, role: input.role });
	console.log(`Created ${username} (${input.role}).${values.password ? '' : ` Password: ${password}`}`);
}

main()
	.catch((e) => {
		console.error(e instanceof Error ? e.message : e);
		process.exitCode = 1;
	})
	.finally(() => closeDb());
