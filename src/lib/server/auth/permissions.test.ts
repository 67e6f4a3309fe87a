import { describe, expect, it } from 'vitest';
import { ACTIONS, type Action, allowedActions, can, grantableTokenRoles, isRole, lowerRole, ROLES, type Role } from './permissions';

// The expected matrix, written out by hand from the role table in the product design (DESIGN.md,
// "Who uses it"): viewer reads published entries, searches, matches a capture; contributor adds
// uploads, drafts, submitting, comments; author adds review, publish, edit any entry, assemblies
// and reference sets; admin adds members, invitations, roles, settings, organisation API tokens.
// Export/import sit with authors and the audit log with admins: our own choice, no source.
// Deleting an entry is for admins (the entries specification: "delete (admin; soft-delete").
const EXPECTED: Record<Action, Record<Role, boolean>> = {
	'org:read': { viewer: true, contributor: true, author: true, admin: true },
	'entry:read': { viewer: true, contributor: true, author: true, admin: true },
	'trace:read': { viewer: true, contributor: true, author: true, admin: true },
	'search:run': { viewer: true, contributor: true, author: true, admin: true },
	'match:run': { viewer: true, contributor: true, author: true, admin: true },
	'token:createOwn': { viewer: true, contributor: true, author: true, admin: true },
	'trace:upload': { viewer: false, contributor: true, author: true, admin: true },
	'entry:draft': { viewer: false, contributor: true, author: true, admin: true },
	'entry:submit': { viewer: false, contributor: true, author: true, admin: true },
	'comment:write': { viewer: false, contributor: true, author: true, admin: true },
	'entry:review': { viewer: false, contributor: false, author: true, admin: true },
	'entry:publish': { viewer: false, contributor: false, author: true, admin: true },
	'entry:editAny': { viewer: false, contributor: false, author: true, admin: true },
	'entry:export': { viewer: false, contributor: false, author: true, admin: true },
	'entry:import': { viewer: false, contributor: false, author: true, admin: true },
	'assembly:manage': { viewer: false, contributor: false, author: true, admin: true },
	'referenceSet:manage': { viewer: false, contributor: false, author: true, admin: true },
	'entry:delete': { viewer: false, contributor: false, author: false, admin: true },
	'member:read': { viewer: false, contributor: false, author: false, admin: true },
	'member:manage': { viewer: false, contributor: false, author: false, admin: true },
	'invitation:manage': { viewer: false, contributor: false, author: false, admin: true },
	'org:settings': { viewer: false, contributor: false, author: false, admin: true },
	'orgToken:manage': { viewer: false, contributor: false, author: false, admin: true },
	'audit:read': { viewer: false, contributor: false, author: false, admin: true }
};

describe('permission matrix', () => {
	it('knows exactly the actions of the written-out table', () => {
		expect([...ACTIONS].sort()).toEqual(Object.keys(EXPECTED).sort());
	});

	for (const role of ROLES) {
		for (const action of Object.keys(EXPECTED) as Action[]) {
			const allowed = EXPECTED[action][role];
			it(`${allowed ? 'lets' : 'refuses'} ${role} ${action}`, () => {
				expect(can(role, action)).toBe(allowed);
			});
		}
	}

	it('is cumulative: each role may do everything the role below it may', () => {
		for (let i = 1; i < ROLES.length; i++) {
			const below = new Set(allowedActions(ROLES[i - 1]));
			const here = new Set(allowedActions(ROLES[i]));
			for (const a of below) expect(here.has(a)).toBe(true);
			expect(here.size).toBeGreaterThan(below.size);
		}
	});
});

describe('role helpers', () => {
	it('orders roles viewer < contributor < author < admin', () => {
		expect(lowerRole('admin', 'viewer')).toBe('viewer');
		expect(lowerRole('contributor', 'author')).toBe('contributor');
		expect(lowerRole('author', 'author')).toBe('author');
	});

	it('lets a member grant a token at most their own role', () => {
		expect(grantableTokenRoles('viewer')).toEqual(['viewer']);
		expect(grantableTokenRoles('author')).toEqual(['viewer', 'contributor', 'author']);
		expect(grantableTokenRoles('admin')).toEqual([...ROLES]);
	});

	it('recognises only the four roles', () => {
		expect(isRole('author')).toBe(true);
		expect(isRole('owner')).toBe(false);
		expect(isRole('Admin')).toBe(false);
		expect(isRole(undefined)).toBe(false);
	});
});
