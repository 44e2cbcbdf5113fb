/** Roles, in increasing order of rights. Each role can do everything the ones before it can. */
export const ROLES = ['viewer', 'engineer', 'admin'] as const;
export type Role = (typeof ROLES)[number];

export function isRole(x: unknown): x is Role {
	return typeof x === 'string' && (ROLES as readonly string[]).includes(x);
}

/** True when `role` has at least the rights of `needed`. */
export function hasRole(role: Role | null | undefined, needed: Role): boolean {
	if (!role) return false;
	return ROLES.indexOf(role) >= ROLES.indexOf(needed);
}
