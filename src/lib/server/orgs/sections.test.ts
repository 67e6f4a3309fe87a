import { describe, expect, it } from 'vitest';
import { orgSections } from './sections';

describe('orgSections', () => {
	// Which pages each role reaches follows the role table in DESIGN.md: members, invitations,
	// organisation API tokens and the audit log are admin business; everyone reads the entries and
	// searches them and matches a capture ("viewer … search, match a capture"); reviewing is for
	// authors and up.
	it('shows a viewer and a contributor the overview, the entries, search and the match screen, and an author the review queue too', () => {
		for (const role of ['viewer', 'contributor'] as const) {
			expect(orgSections('bench', role).map((s) => s.label)).toEqual(['Overview', 'Entries', 'Search', 'Match a capture']);
		}
		expect(orgSections('bench', 'author').map((s) => s.label)).toEqual(['Overview', 'Entries', 'Search', 'Match a capture', 'Review']);
	});

	it('shows an admin every section, under the organisation’s address', () => {
		expect(orgSections('bench', 'admin')).toEqual([
			{ href: '/o/bench', label: 'Overview' },
			{ href: '/o/bench/entries', label: 'Entries' },
			{ href: '/o/bench/search', label: 'Search' },
			{ href: '/o/bench/match', label: 'Match a capture' },
			{ href: '/o/bench/review', label: 'Review' },
			{ href: '/o/bench/members', label: 'Members' },
			{ href: '/o/bench/invitations', label: 'Invitations' },
			{ href: '/o/bench/tokens', label: 'API tokens' },
			{ href: '/o/bench/audit', label: 'Audit log' },
			{ href: '/o/bench/transfer', label: 'Export & import' },
			{ href: '/o/bench/settings', label: 'Settings' }
		]);
	});
});
