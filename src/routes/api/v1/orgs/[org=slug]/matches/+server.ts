import { json } from '@sveltejs/kit';
import { matchOptions } from '$lib/schemas/entries';
import { apiError, toApiIssues } from '$lib/server/api/errors';
import { requireMember } from '$lib/server/auth/guard';
import { can } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { matchIndexes } from '$lib/server/match';
import { captureSummary, matchCapture } from '$lib/server/match/capture';
import { insertTrace } from '$lib/server/traces/service';
import { readCaptureUpload } from '$lib/server/traces/upload';
import type { RequestHandler } from './$types';

/**
 * "Has anyone seen this curve?" A capture (multipart `file`, or JSON `capture`) with its test
 * conditions → its analysis and the stored traces ranked by shape, comparable conditions first.
 */
export const POST: RequestHandler = async ({ params, request, url }) => {
	const member = await requireMember(params.org, 'match:run');
	const read = await readCaptureUpload(request);
	if (!read.ok) return read.response;
	const options = matchOptions.safeParse({ ...Object.fromEntries(url.searchParams), ...read.fields });
	if (!options.success) return apiError(400, 'invalid_input', 'The match options are not valid.', toApiIssues(options.error.issues));
	const o = options.data;
	const matches = await matchCapture(db, matchIndexes(), member, read.processed, {
		limit: o.limit,
		filters: { componentKind: o.componentKind, assembly: o.assembly, tags: o.tags, role: o.traceRole }
	});
	let savedTraceId: string | null = null;
	if (o.save && can(member.role, 'trace:upload')) {
		savedTraceId = await insertTrace(db, member.orgId, {
			entryId: null,
			role: 'query',
			label: read.upload.label,
			createdBy: member.userId,
			processed: read.processed,
			file: read.file
		});
	}
	return json({
		capture: { ...captureSummary(read.processed), savedTraceId },
		matches,
		empty: matches.length === 0 ? 'No stored traces to compare with yet. Publish entries with traces, or widen the filters.' : null
	});
};
