import { fail, redirect } from '@sveltejs/kit';
import { COMPONENT_KINDS, TRACE_ROLES } from '$lib/schemas/entries';
import { requireMember } from '$lib/server/auth/guard';
import { can } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { readerFor } from '$lib/server/entries/rules';
import { matchIndexes } from '$lib/server/match';
import {
	captureSummary,
	countMatchableTraces,
	findMatchPreference,
	fixSummary,
	matchCapture,
	saveMatchPreference,
	writeDraftFromCapture
} from '$lib/server/match/capture';
import { readMatchForm } from '$lib/server/match/form';
import { MAX_TRACE_BYTES } from '$lib/server/traces/service';
import type { Actions, PageServerLoad } from './$types';

/** What a new member's form starts with: a common low-power bench setting (common practice, no source). */
const DEFAULT_CONDITIONS = { sourcePeakV: 10, sourceResistanceOhm: 1000, frequencyHz: 60 };

export const load: PageServerLoad = async ({ params }) => {
	const member = await requireMember(params.org, 'match:run');
	const [preference, traceCount] = await Promise.all([
		findMatchPreference(db, member.orgId, member.userId),
		countMatchableTraces(db, member.orgId, readerFor(member))
	]);
	return {
		preference: preference ?? { conditions: DEFAULT_CONDITIONS, senseOhm: null },
		remembered: preference !== undefined,
		traceCount,
		mayDraft: can(member.role, 'entry:draft'),
		mayUpload: can(member.role, 'trace:upload'),
		maxBytes: MAX_TRACE_BYTES,
		componentKinds: COMPONENT_KINDS,
		traceRoles: TRACE_ROLES
	};
};

export const actions: Actions = {
	/** Ranks the organisation's stored traces against the capture; stores nothing but the conditions. */
	match: async ({ params, request }) => {
		const member = await requireMember(params.org, 'match:run');
		const read = await readMatchForm(request);
		if (!read.ok) return fail(read.status, { values: read.values, fieldErrors: read.fieldErrors, message: read.message });
		await saveMatchPreference(db, member.orgId, member.userId, { conditions: read.processed.conditions, senseOhm: read.processed.senseOhm });
		const cards = await matchCapture(db, matchIndexes(), member, read.processed, {
			limit: read.options.limit,
			filters: {
				componentKind: read.options.componentKind,
				assembly: read.options.assembly,
				tags: read.options.tags,
				role: read.options.traceRole
			}
		});
		return {
			values: read.values,
			carried: read.carried,
			capture: { fileName: read.file.name, ...captureSummary(read.processed) },
			cards: cards.map((c) => ({ ...c, entry: { ...c.entry, fix: fixSummary(c.entry.fix) } }))
		};
	},

	/** Saves the capture onto a new draft entry pre-filled from its analysis, then opens the editor. */
	draft: async ({ params, request }) => {
		const member = await requireMember(params.org, 'entry:draft');
		const read = await readMatchForm(request);
		if (!read.ok) return fail(read.status, { values: read.values, fieldErrors: read.fieldErrors, message: read.message });
		await saveMatchPreference(db, member.orgId, member.userId, { conditions: read.processed.conditions, senseOhm: read.processed.senseOhm });
		const id = await writeDraftFromCapture(db, member, read.processed, read.file, read.upload.label);
		redirect(303, `/o/${member.orgSlug}/entries/${id}/edit`);
	}
};
