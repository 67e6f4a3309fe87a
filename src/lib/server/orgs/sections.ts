import { type Action, can, type Role } from '../auth/permissions';

export interface OrgSection {
	href: string;
	label: string;
	/** A count shown beside the label (entries waiting for review). */
	badge?: number;
}

/** The organisation's pages in navigation order, each with the action that opens it. */
const SECTIONS: { path: string; label: string; action: Action }[] = [
	{ path: '', label: 'Overview', action: 'org:read' },
	{ path: '/entries', label: 'Entries', action: 'entry:read' },
	{ path: '/search', label: 'Search', action: 'search:run' },
	{ path: '/match', label: 'Match a capture', action: 'match:run' },
	{ path: '/review', label: 'Review', action: 'entry:review' },
	{ path: '/members', label: 'Members', action: 'member:read' },
	{ path: '/invitations', label: 'Invitations', action: 'invitation:manage' },
	{ path: '/tokens', label: 'API tokens', action: 'orgToken:manage' },
	{ path: '/audit', label: 'Audit log', action: 'audit:read' },
	{ path: '/transfer', label: 'Export & import', action: 'org:settings' },
	{ path: '/settings', label: 'Settings', action: 'org:settings' }
];

/** The sections of `/o/<slug>` a member with `role` may open; the navigation shows only these. */
export function orgSections(slug: string, role: Role): OrgSection[] {
	return SECTIONS.filter((s) => can(role, s.action)).map((s) => ({ href: `/o/${slug}${s.path}`, label: s.label }));
}
