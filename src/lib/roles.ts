/**
 * The four roles, lowest first, and their labels. Shared by server code and browser code (form
 * schemas), so it lives outside $lib/server; what each role may do is in
 * $lib/server/auth/permissions.ts.
 */
export const ROLES = ['viewer', 'contributor', 'author', 'admin'] as const;
export type Role = (typeof ROLES)[number];

export function isRole(value: unknown): value is Role {
	return typeof value === 'string' && (ROLES as readonly string[]).includes(value);
}

export const ROLE_LABELS: Readonly<Record<Role, string>> = {
	viewer: 'Viewer',
	contributor: 'Contributor',
	author: 'Author',
	admin: 'Admin'
};
