import { readFileSync } from 'node:fs';
import type { Action } from '../../src/lib/server/auth/permissions';

/**
 * Every organisation-scoped route and form action, in one table: the cross-tenant test and the
 * role × action test iterate it, and a check fails when a route file under `/o/[org=slug]/` or
 * `/api/v1/orgs/[org=slug]/` (or a form action in one) is missing here.
 *
 * `action` is the permission the route needs; `request` builds a valid request for organisation
 * `slug` (the fixture passes ids it created), so an allowed caller gets past the guard.
 */
export interface OrgRoute {
	/** The route folder under src/routes, e.g. `o/[org=slug]/members`. */
	route: string;
	kind: 'page' | 'action' | 'endpoint';
	/** For form actions, the action name as exported by +page.server.ts. */
	name?: string;
	method: 'GET' | 'POST' | 'PATCH' | 'DELETE';
	/** Status of an allowed call when it is not the usual (200, or 201 for an endpoint POST). */
	status?: number;
	action: Action;
	/** Writes something when allowed: the matrix gives each allowed call fresh data. */
	writes?: boolean;
	request: (slug: string, fx: RouteFixture) => { path: string; body?: Record<string, string> | { json: unknown } | FormData };
}

/** Ids a request may refer to, made fresh by the test before each call that writes. */
export interface RouteFixture {
	/** A member of the organisation who may be changed or removed. */
	victimUserId: string;
	/** An open invitation of the organisation. */
	invitationId: string;
	/** A new address to invite. */
	freshEmail: string;
	/** An active API token of the victim for the organisation. */
	tokenId: string;
	/** A published entry written by the admin (so only editAny may change it), version 1. */
	entryId: string;
	/** Its fault trace. */
	traceId: string;
	/** A photo of that entry. */
	photoId: string;
	/** A draft written by the contributor member, version 1. */
	draftEntryId: string;
	/** An entry the contributor member wrote and submitted: in review. */
	reviewEntryId: string;
}

/** The editor's form fields for a small valid entry, as a browser posts them. */
function entryForm(extra: Record<string, string>): Record<string, string> {
	return { title: 'Route test', componentKind: 'resistor', symptom: 'Edited by the route test', tags: 'route-test', ...extra };
}

/** A small PNG (written by a browser's canvas encoder) as a file upload in the field `photo`. */
function photoForm(): FormData {
	const form = new FormData();
	form.set('photo', new File([new Uint8Array(readFileSync('tests/fixtures/photos/board-64x48.png'))], 'board.png', { type: 'image/png' }));
	return form;
}

/** A bundle as the import form sends it: the file in `bundle`. */
function bundleForm(bundle: unknown): FormData {
	const form = new FormData();
	form.set('bundle', new File([JSON.stringify(bundle)], 'bundle.json', { type: 'application/json' }));
	return form;
}

/** The smallest valid bundle: no entries (imports nothing, reports so). */
const EMPTY_BUNDLE = {
	format: 'curvelore-bundle',
	version: 1,
	exportedAt: '2026-12-01T00:00:00.000Z',
	source: { organisation: { slug: 'elsewhere', name: 'Elsewhere' }, scope: 'organisation' },
	entries: []
};

/** A small bench capture as JSON samples: a 2.2 kΩ resistor at 10 V · 1 kΩ (Ohm's law), 4 periods. */
function resistorCapture() {
	const n = 400;
	const v: number[] = [];
	const i: number[] = [];
	for (let k = 0; k < n; k++) {
		const e = 10 * Math.sin((2 * Math.PI * 4 * k) / n);
		i.push(e / 3200);
		v.push((e * 2200) / 3200);
	}
	return { capture: { v, i }, sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60, role: 'known-good' };
}

/** The same resistor capture as a bench CSV, as pasted into the match form (time, volts, milliamps). */
function resistorCsv(): string {
	const { capture } = resistorCapture();
	const rows = capture.v.map((v, k) => `${(k / (100 * 60)).toExponential(6)},${v.toPrecision(6)},${(capture.i[k] * 1e3).toPrecision(6)}`);
	return ['time_s,voltage_V,current_mA', ...rows].join('\n');
}

const matchForm = () => ({ csv: resistorCsv(), sourcePeakV: '10', sourceResistanceOhm: '1000', frequencyHz: '60' });

export const ORG_ROUTES: OrgRoute[] = [
	{ route: 'o/[org=slug]', kind: 'page', method: 'GET', action: 'org:read', request: (s) => ({ path: `/o/${s}` }) },
	{ route: 'o/[org=slug]/members', kind: 'page', method: 'GET', action: 'member:read', request: (s) => ({ path: `/o/${s}/members` }) },
	{
		route: 'o/[org=slug]/members',
		kind: 'action',
		name: 'changeRole',
		method: 'POST',
		action: 'member:manage',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/members?/changeRole`, body: { userId: fx.victimUserId, role: 'author' } })
	},
	{
		route: 'o/[org=slug]/members',
		kind: 'action',
		name: 'remove',
		method: 'POST',
		action: 'member:manage',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/members?/remove`, body: { userId: fx.victimUserId } })
	},
	{ route: 'o/[org=slug]/invitations', kind: 'page', method: 'GET', action: 'invitation:manage', request: (s) => ({ path: `/o/${s}/invitations` }) },
	{
		route: 'o/[org=slug]/invitations',
		kind: 'action',
		name: 'invite',
		method: 'POST',
		action: 'invitation:manage',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/invitations?/invite`, body: { email: fx.freshEmail, role: 'viewer' } })
	},
	{
		route: 'o/[org=slug]/invitations',
		kind: 'action',
		name: 'resend',
		method: 'POST',
		action: 'invitation:manage',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/invitations?/resend`, body: { id: fx.invitationId } })
	},
	{
		route: 'o/[org=slug]/invitations',
		kind: 'action',
		name: 'revoke',
		method: 'POST',
		action: 'invitation:manage',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/invitations?/revoke`, body: { id: fx.invitationId } })
	},
	{ route: 'o/[org=slug]/tokens', kind: 'page', method: 'GET', action: 'orgToken:manage', request: (s) => ({ path: `/o/${s}/tokens` }) },
	{
		route: 'o/[org=slug]/tokens',
		kind: 'action',
		name: 'revoke',
		method: 'POST',
		action: 'orgToken:manage',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/tokens?/revoke`, body: { id: fx.tokenId } })
	},
	{ route: 'o/[org=slug]/match', kind: 'page', method: 'GET', action: 'match:run', request: (s) => ({ path: `/o/${s}/match` }) },
	{ route: 'o/[org=slug]/match', kind: 'action', name: 'match', method: 'POST', action: 'match:run', request: (s) => ({ path: `/o/${s}/match?/match`, body: matchForm() }) },
	{
		route: 'o/[org=slug]/match',
		kind: 'action',
		name: 'draft',
		method: 'POST',
		action: 'entry:draft',
		writes: true,
		status: 303,
		request: (s) => ({ path: `/o/${s}/match?/draft`, body: matchForm() })
	},
	{ route: 'o/[org=slug]/audit', kind: 'page', method: 'GET', action: 'audit:read', request: (s) => ({ path: `/o/${s}/audit` }) },
	{ route: 'o/[org=slug]/settings', kind: 'page', method: 'GET', action: 'org:settings', request: (s) => ({ path: `/o/${s}/settings` }) },
	{
		// Keeps "Bench Alpha" in the name: other route tests look for it in invitation mails.
		route: 'o/[org=slug]/settings',
		kind: 'action',
		name: 'rename',
		method: 'POST',
		action: 'org:settings',
		writes: true,
		request: (s) => ({ path: `/o/${s}/settings?/rename`, body: { name: 'Bench Alpha Workshop' } })
	},
	{ route: 'o/[org=slug]/entries', kind: 'page', method: 'GET', action: 'entry:read', request: (s) => ({ path: `/o/${s}/entries?kind=diode` }) },
	{
		// The fixture entry is not deleted, so an allowed caller gets the "can no longer be restored" answer.
		route: 'o/[org=slug]/entries',
		kind: 'action',
		name: 'restore',
		method: 'POST',
		status: 400,
		action: 'entry:delete',
		request: (s, fx) => ({ path: `/o/${s}/entries?/restore`, body: { id: fx.entryId } })
	},
	{ route: 'o/[org=slug]/entries/[id=uuid]', kind: 'page', method: 'GET', action: 'entry:read', request: (s, fx) => ({ path: `/o/${s}/entries/${fx.entryId}` }) },
	{
		route: 'o/[org=slug]/entries/[id=uuid]',
		kind: 'action',
		name: 'transition',
		method: 'POST',
		action: 'entry:publish',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/entries/${fx.entryId}?/transition`, body: { action: 'archive' } })
	},
	{
		route: 'o/[org=slug]/entries/[id=uuid]',
		kind: 'action',
		name: 'delete',
		method: 'POST',
		status: 303,
		action: 'entry:delete',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/entries/${fx.entryId}?/delete`, body: {} })
	},
	{
		route: 'o/[org=slug]/entries/[id=uuid]/history',
		kind: 'page',
		method: 'GET',
		action: 'entry:read',
		request: (s, fx) => ({ path: `/o/${s}/entries/${fx.entryId}/history` })
	},
	{
		route: 'o/[org=slug]/entries/[id=uuid]/history',
		kind: 'action',
		name: 'restore',
		method: 'POST',
		status: 303,
		action: 'entry:editAny',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/entries/${fx.entryId}/history?/restore`, body: { restore: '1', version: '1' } })
	},
	{ route: 'api/v1/orgs/[org=slug]', kind: 'endpoint', method: 'GET', action: 'org:read', request: (s) => ({ path: `/api/v1/orgs/${s}` }) },
	{
		route: 'api/v1/orgs/[org=slug]/members',
		kind: 'endpoint',
		method: 'GET',
		action: 'member:read',
		request: (s) => ({ path: `/api/v1/orgs/${s}/members` })
	},
	{
		route: 'api/v1/orgs/[org=slug]/invitations',
		kind: 'endpoint',
		method: 'GET',
		action: 'invitation:manage',
		request: (s) => ({ path: `/api/v1/orgs/${s}/invitations` })
	},
	{
		route: 'api/v1/orgs/[org=slug]/invitations',
		kind: 'endpoint',
		method: 'POST',
		action: 'invitation:manage',
		writes: true,
		request: (s, fx) => ({ path: `/api/v1/orgs/${s}/invitations`, body: { json: { email: fx.freshEmail, role: 'viewer' } } })
	},
	{
		route: 'api/v1/orgs/[org=slug]/invitations/[id=uuid]/resend',
		kind: 'endpoint',
		method: 'POST',
		action: 'invitation:manage',
		writes: true,
		status: 200,
		request: (s, fx) => ({ path: `/api/v1/orgs/${s}/invitations/${fx.invitationId}/resend`, body: { json: {} } })
	},
	// Entries and traces. Changing someone else's published entry takes entry:editAny whatever the
	// endpoint's own guard lets through, so that is what the matrix checks for those calls.
	{ route: 'api/v1/orgs/[org=slug]/entries', kind: 'endpoint', method: 'GET', action: 'entry:read', request: (s) => ({ path: `/api/v1/orgs/${s}/entries?status=published&limit=5` }) },
	{
		route: 'api/v1/orgs/[org=slug]/entries',
		kind: 'endpoint',
		method: 'POST',
		action: 'entry:draft',
		writes: true,
		request: (s) => ({ path: `/api/v1/orgs/${s}/entries`, body: { json: { title: 'Route test', componentKind: 'other', symptom: 'Route test' } } })
	},
	{ route: 'api/v1/orgs/[org=slug]/entries/[id=uuid]', kind: 'endpoint', method: 'GET', action: 'entry:read', request: (s, fx) => ({ path: `/api/v1/orgs/${s}/entries/${fx.entryId}` }) },
	{
		route: 'api/v1/orgs/[org=slug]/entries/[id=uuid]',
		kind: 'endpoint',
		method: 'PATCH',
		action: 'entry:editAny',
		writes: true,
		request: (s, fx) => ({ path: `/api/v1/orgs/${s}/entries/${fx.entryId}`, body: { json: { version: 1, symptom: 'Edited by the route test' } } })
	},
	{
		route: 'api/v1/orgs/[org=slug]/entries/[id=uuid]',
		kind: 'endpoint',
		method: 'DELETE',
		action: 'entry:delete',
		writes: true,
		status: 204,
		request: (s, fx) => ({ path: `/api/v1/orgs/${s}/entries/${fx.entryId}` })
	},
	{
		route: 'api/v1/orgs/[org=slug]/entries/[id=uuid]/transitions',
		kind: 'endpoint',
		method: 'POST',
		action: 'entry:publish',
		writes: true,
		status: 200,
		request: (s, fx) => ({ path: `/api/v1/orgs/${s}/entries/${fx.entryId}/transitions`, body: { json: { action: 'archive' } } })
	},
	{ route: 'api/v1/orgs/[org=slug]/entries/[id=uuid]/revisions', kind: 'endpoint', method: 'GET', action: 'entry:read', request: (s, fx) => ({ path: `/api/v1/orgs/${s}/entries/${fx.entryId}/revisions` }) },
	{ route: 'api/v1/orgs/[org=slug]/entries/[id=uuid]/traces', kind: 'endpoint', method: 'GET', action: 'trace:read', request: (s, fx) => ({ path: `/api/v1/orgs/${s}/entries/${fx.entryId}/traces` }) },
	{
		route: 'api/v1/orgs/[org=slug]/entries/[id=uuid]/traces',
		kind: 'endpoint',
		method: 'POST',
		action: 'entry:editAny',
		writes: true,
		request: (s, fx) => ({ path: `/api/v1/orgs/${s}/entries/${fx.entryId}/traces`, body: { json: resistorCapture() } })
	},
	// Adding traces without JavaScript. The matrix posts url-encoded fields without a file, so an
	// allowed caller gets past the guard to the form's own refusal (400, "Choose a capture file").
	{ route: 'o/[org=slug]/entries/[id=uuid]/traces/new', kind: 'page', method: 'GET', action: 'entry:editAny', request: (s, fx) => ({ path: `/o/${s}/entries/${fx.entryId}/traces/new` }) },
	{
		route: 'o/[org=slug]/entries/[id=uuid]/traces/new',
		kind: 'action',
		name: 'upload',
		method: 'POST',
		action: 'entry:editAny',
		status: 400,
		request: (s, fx) => ({ path: `/o/${s}/entries/${fx.entryId}/traces/new?/upload`, body: { role: 'fault', sourcePeakV: '10', sourceResistanceOhm: '1000', frequencyHz: '60' } })
	},
	{
		route: 'o/[org=slug]/entries/[id=uuid]/traces/new',
		kind: 'action',
		name: 'simulate',
		method: 'POST',
		action: 'entry:editAny',
		writes: true,
		status: 303,
		request: (s, fx) => ({ path: `/o/${s}/entries/${fx.entryId}/traces/new?/simulate`, body: { kind: 'resistor', ohms: '4k7', sourcePeakV: '10', sourceResistanceOhm: '1k', frequencyHz: '60' } })
	},
	{
		route: 'o/[org=slug]/entries/[id=uuid]/traces/new',
		kind: 'action',
		name: 'delete',
		method: 'POST',
		action: 'entry:editAny',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/entries/${fx.entryId}/traces/new?/delete`, body: { traceId: fx.traceId } })
	},
	{ route: 'api/v1/orgs/[org=slug]/traces/[trace=uuid]', kind: 'endpoint', method: 'GET', action: 'trace:read', request: (s, fx) => ({ path: `/api/v1/orgs/${s}/traces/${fx.traceId}?view=canonical` }) },
	{
		route: 'api/v1/orgs/[org=slug]/traces/[trace=uuid]',
		kind: 'endpoint',
		method: 'DELETE',
		action: 'entry:editAny',
		writes: true,
		status: 204,
		request: (s, fx) => ({ path: `/api/v1/orgs/${s}/traces/${fx.traceId}` })
	},
	// Search, and the "this helped" mark (any reader of the entry may set or clear their own).
	{ route: 'o/[org=slug]/search', kind: 'page', method: 'GET', action: 'search:run', request: (s) => ({ path: `/o/${s}/search?q=fixture` }) },
	{ route: 'api/v1/orgs/[org=slug]/search', kind: 'endpoint', method: 'GET', action: 'search:run', request: (s) => ({ path: `/api/v1/orgs/${s}/search?q=fixture&kind=resistor` }) },
	{
		route: 'api/v1/orgs/[org=slug]/entries/[id=uuid]/helped',
		kind: 'endpoint',
		method: 'POST',
		action: 'entry:read',
		writes: true,
		status: 200,
		request: (s, fx) => ({ path: `/api/v1/orgs/${s}/entries/${fx.entryId}/helped`, body: { json: {} } })
	},
	{
		route: 'api/v1/orgs/[org=slug]/entries/[id=uuid]/helped',
		kind: 'endpoint',
		method: 'DELETE',
		action: 'entry:read',
		writes: true,
		status: 200,
		request: (s, fx) => ({ path: `/api/v1/orgs/${s}/entries/${fx.entryId}/helped` })
	},
	// Photos follow their entry: read with it; changing another's published entry takes editAny.
	{ route: 'api/v1/orgs/[org=slug]/entries/[id=uuid]/photos', kind: 'endpoint', method: 'GET', action: 'entry:read', request: (s, fx) => ({ path: `/api/v1/orgs/${s}/entries/${fx.entryId}/photos` }) },
	{
		route: 'api/v1/orgs/[org=slug]/entries/[id=uuid]/photos',
		kind: 'endpoint',
		method: 'POST',
		action: 'entry:editAny',
		writes: true,
		request: (s, fx) => ({ path: `/api/v1/orgs/${s}/entries/${fx.entryId}/photos`, body: photoForm() })
	},
	{ route: 'api/v1/orgs/[org=slug]/photos/[photo=uuid]', kind: 'endpoint', method: 'GET', action: 'entry:read', request: (s, fx) => ({ path: `/api/v1/orgs/${s}/photos/${fx.photoId}` }) },
	{
		route: 'api/v1/orgs/[org=slug]/photos/[photo=uuid]',
		kind: 'endpoint',
		method: 'DELETE',
		action: 'entry:editAny',
		writes: true,
		status: 204,
		request: (s, fx) => ({ path: `/api/v1/orgs/${s}/photos/${fx.photoId}` })
	},
	{ route: 'o/[org=slug]/entries/[id=uuid]/photos', kind: 'page', method: 'GET', action: 'entry:draft', request: (s, fx) => ({ path: `/o/${s}/entries/${fx.entryId}/photos` }) },
	{
		route: 'o/[org=slug]/entries/[id=uuid]/photos',
		kind: 'action',
		name: 'upload',
		method: 'POST',
		action: 'entry:editAny',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/entries/${fx.entryId}/photos?/upload`, body: photoForm() })
	},
	{
		route: 'o/[org=slug]/entries/[id=uuid]/photos',
		kind: 'action',
		name: 'delete',
		method: 'POST',
		action: 'entry:editAny',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/entries/${fx.entryId}/photos?/delete`, body: { photoId: fx.photoId } })
	},
	// Export and import. One entry's bundle is an author's; the whole organisation's is an admin's.
	{ route: 'api/v1/orgs/[org=slug]/export', kind: 'endpoint', method: 'GET', action: 'entry:export', request: (s, fx) => ({ path: `/api/v1/orgs/${s}/export?entry=${fx.entryId}` }) },
	{
		route: 'api/v1/orgs/[org=slug]/import',
		kind: 'endpoint',
		method: 'POST',
		action: 'org:settings',
		writes: true,
		status: 200,
		request: (s) => ({ path: `/api/v1/orgs/${s}/import`, body: { json: EMPTY_BUNDLE } })
	},
	{ route: 'o/[org=slug]/transfer', kind: 'page', method: 'GET', action: 'org:settings', request: (s) => ({ path: `/o/${s}/transfer` }) },
	{
		route: 'o/[org=slug]/transfer',
		kind: 'action',
		name: 'import',
		method: 'POST',
		action: 'org:settings',
		writes: true,
		request: (s) => ({ path: `/o/${s}/transfer?/import`, body: bundleForm(EMPTY_BUNDLE) })
	},
	// Writing and reviewing. Editing someone else's published entry takes entry:editAny; submitting
	// the contributor's own draft takes entry:submit; the queue and its actions are the reviewers'.
	{ route: 'o/[org=slug]/entries/new', kind: 'page', method: 'GET', action: 'entry:draft', request: (s) => ({ path: `/o/${s}/entries/new` }) },
	{
		route: 'o/[org=slug]/entries/new',
		kind: 'action',
		name: 'create',
		method: 'POST',
		action: 'entry:draft',
		writes: true,
		status: 303,
		request: (s) => ({ path: `/o/${s}/entries/new?/create`, body: entryForm({}) })
	},
	{ route: 'o/[org=slug]/entries/[id=uuid]/edit', kind: 'page', method: 'GET', action: 'entry:editAny', request: (s, fx) => ({ path: `/o/${s}/entries/${fx.entryId}/edit` }) },
	{
		route: 'o/[org=slug]/entries/[id=uuid]/edit',
		kind: 'action',
		name: 'save',
		method: 'POST',
		action: 'entry:editAny',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/entries/${fx.entryId}/edit?/save`, body: entryForm({ version: '1' }) })
	},
	{
		route: 'o/[org=slug]/entries/[id=uuid]/edit',
		kind: 'action',
		name: 'submit',
		method: 'POST',
		action: 'entry:submit',
		writes: true,
		status: 303,
		request: (s, fx) => ({ path: `/o/${s}/entries/${fx.draftEntryId}/edit?/submit`, body: entryForm({ version: '1' }) })
	},
	{ route: 'o/[org=slug]/review', kind: 'page', method: 'GET', action: 'entry:review', request: (s) => ({ path: `/o/${s}/review` }) },
	{
		route: 'o/[org=slug]/review',
		kind: 'action',
		name: 'publish',
		method: 'POST',
		action: 'entry:publish',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/review?/publish`, body: { id: fx.reviewEntryId } })
	},
	{
		route: 'o/[org=slug]/review',
		kind: 'action',
		name: 'return',
		method: 'POST',
		action: 'entry:review',
		writes: true,
		request: (s, fx) => ({ path: `/o/${s}/review?/return`, body: { id: fx.reviewEntryId, comment: 'Add the known-good curve.' } })
	},
	{
		route: 'api/v1/orgs/[org=slug]/markdown/preview',
		kind: 'endpoint',
		method: 'POST',
		action: 'entry:draft',
		status: 200,
		request: (s) => ({ path: `/api/v1/orgs/${s}/markdown/preview`, body: { json: { body: '**Open** <script>x</script>' } } })
	},
	{
		route: 'api/v1/orgs/[org=slug]/matches',
		kind: 'endpoint',
		method: 'POST',
		action: 'match:run',
		status: 200,
		request: (s) => ({ path: `/api/v1/orgs/${s}/matches?limit=5`, body: { json: resistorCapture() } })
	}
];
