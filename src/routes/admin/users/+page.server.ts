import { fail } from '@sveltejs/kit';
import { lucia } from '$lib/server/auth';
import { isRole } from '$lib/server/roles';
import {
	countAdmins,
	createUser,
	getUserById,
	getUserByUsername,
	listUsers,
	setDisabled,
	setPassword,
	setRole,
	validateNewUser,
	validatePassword
} from '$lib/server/users';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async () => ({ users: await listUsers() });

async function target(form: FormData) {
	const id = String(form.get('id') ?? '');
	const user = id ? await getUserById(id) : null;
	return user;
}

export const actions: Actions = {
	create: async ({ request }) => {
		const form = await request.formData();
		const input = {
			username: String(form.get('username') ?? '').trim().toLowerCase(),
			displayName: String(form.get('displayName') ?? ''),
			password: String(form.get('password') ?? ''),
			role: String(form.get('role') ?? '')
		};
		const errors = validateNewUser(input);
		if (!errors.username && (await getUserByUsername(input.username))) errors.username = 'That user name is taken.';
		if (Object.keys(errors).length)
			return fail(400, { action: 'create', errors, values: { username: input.username, displayName: input.displayName, role: input.role } });
		await createUser({ ...input, role: input.role as 'viewer' });
		return { action: 'create', message: `Created ${input.username}.` };
	},
	reset: async ({ request }) => {
		const form = await request.formData();
		const user = await target(form);
		if (!user) return fail(404, { action: 'reset', message: 'No such user.' });
		const password = String(form.get('password') ?? '');
		const problem = validatePassword(password);
		if (problem) return fail(400, { action: 'reset', id: user.id, message: problem });
		await setPassword(user.id, password);
		await lucia.invalidateUserSessions(user.id); // a reset signs the account out everywhere
		return { action: 'reset', message: `New password set for ${user.username}; their sessions were signed out.` };
	},
	role: async ({ request, locals }) => {
		const form = await request.formData();
		const user = await target(form);
		const role = String(form.get('role') ?? '');
		if (!user) return fail(404, { action: 'role', message: 'No such user.' });
		if (!isRole(role)) return fail(400, { action: 'role', id: user.id, message: 'Role must be viewer, engineer or admin.' });
		if (user.role === 'admin' && role !== 'admin' && (await countAdmins()) <= 1)
			return fail(400, { action: 'role', id: user.id, message: 'Keep at least one active admin.' });
		if (user.id === locals.user!.id && role !== 'admin')
			return fail(400, { action: 'role', id: user.id, message: 'Ask another admin to change your own role.' });
		await setRole(user.id, role);
		return { action: 'role', message: `${user.username} is now ${role}.` };
	},
	disable: async ({ request, locals }) => {
		const form = await request.formData();
		const user = await target(form);
		if (!user) return fail(404, { action: 'disable', message: 'No such user.' });
		if (user.id === locals.user!.id) return fail(400, { action: 'disable', id: user.id, message: 'You cannot disable yourself.' });
		await setDisabled(user.id, true);
		await lucia.invalidateUserSessions(user.id);
		return { action: 'disable', message: `${user.username} is disabled and signed out.` };
	},
	enable: async ({ request }) => {
		const form = await request.formData();
		const user = await target(form);
		if (!user) return fail(404, { action: 'enable', message: 'No such user.' });
		await setDisabled(user.id, false);
		return { action: 'enable', message: `${user.username} is enabled.` };
	}
};
