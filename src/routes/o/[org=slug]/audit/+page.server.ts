import { requireMember } from '$lib/server/auth/guard';
import { db } from '$lib/server/db';
import { AUDIT_PAGE_SIZE, listAudit } from '$lib/server/orgs/audit';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ params, url }) => {
	const member = await requireMember(params.org, 'audit:read');
	const entries = await listAudit(db, member.orgId, { before: url.searchParams.get('before') ?? undefined });
	return {
		entries,
		older: entries.length === AUDIT_PAGE_SIZE ? entries[entries.length - 1].id : null
	};
};
