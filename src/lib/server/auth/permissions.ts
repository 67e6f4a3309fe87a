/**
 * Who may do what inside an organisation. The one place that maps a role to its allowed actions;
 * the guard (guard.ts), the navigation and the API all ask this module. Pure: no I/O.
 *
 * Roles are cumulative, lowest first: each role may do everything the one before it may.
 */
import { isRole, ROLE_LABELS, ROLES, type Role } from '../../roles';

export { isRole, ROLE_LABELS, ROLES, type Role };

/** Every action a member can be allowed, grouped by the lowest role that gets it. */
const GRANTS = {
	viewer: [
		'org:read', // see the organisation's home
		'entry:read', // read published entries
		'trace:read', // see the curves attached to readable entries
		'search:run', // search entries by symptom text
		'match:run', // upload a query capture and rank stored signatures (not stored as a trace)
		'token:createOwn' // personal API tokens, never above the member's own role
	],
	contributor: [
		'trace:upload', // store captures
		'entry:draft', // write and edit one's own drafts
		'entry:submit', // submit a draft for review
		'comment:write'
	],
	author: [
		'entry:review', // review others' submissions
		'entry:publish',
		'entry:editAny', // edit any entry, whoever wrote it
		'entry:export',
		'entry:import',
		'assembly:manage', // boards/assemblies the entries refer to
		'referenceSet:manage' // known-good reference sets
	],
	admin: [
		'entry:delete', // soft-delete an entry (restorable for 30 days)
		'member:read', // the members page: names, e-mail addresses, roles, activity
		'member:manage', // change roles, remove members
		'invitation:manage', // invite, resend, revoke
		'org:settings',
		'orgToken:manage', // see and revoke any member's API token for this organisation
		'audit:read'
	]
} as const satisfies Record<Role, readonly string[]>;

export type Action = (typeof GRANTS)[Role][number];

export const ACTIONS: readonly Action[] = ROLES.flatMap((r) => GRANTS[r]);

/** The lowest role that may perform each action. */
export const MIN_ROLE: Readonly<Record<Action, Role>> = Object.fromEntries(
	ROLES.flatMap((role) => GRANTS[role].map((action) => [action, role]))
) as Record<Action, Role>;

export function roleRank(role: Role): number {
	return ROLES.indexOf(role);
}

/** Whether `role` may perform `action`. */
export function can(role: Role, action: Action): boolean {
	return roleRank(role) >= roleRank(MIN_ROLE[action]);
}

/** Every action the role may perform, in declaration order. */
export function allowedActions(role: Role): Action[] {
	return ACTIONS.filter((a) => can(role, a));
}

/** The lower of two roles (an API token acts with at most its owner's current role). */
export function lowerRole(a: Role, b: Role): Role {
	return roleRank(a) <= roleRank(b) ? a : b;
}

/** Roles a member with `role` may hand to an API token of their own: their role and below. */
export function grantableTokenRoles(role: Role): Role[] {
	return ROLES.filter((r) => roleRank(r) <= roleRank(role));
}

export const ROLE_SUMMARIES: Readonly<Record<Role, string>> = {
	viewer: 'Reads published entries, searches, matches a capture.',
	contributor: 'Also uploads captures, writes drafts, submits them for review, comments.',
	author: 'Also reviews and publishes, edits any entry, manages assemblies and reference sets.',
	admin: 'Also manages members, invitations, roles, settings and API tokens.'
};
