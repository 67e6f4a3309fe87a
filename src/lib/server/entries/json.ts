import type { StoredTrace } from '../traces/service';
import type { Entry, Revision } from './queries';
import type { ReviewEvent } from './review-history';

/** Entries and traces as the JSON API shows them: ISO dates, SI units, no internal fields. */
export function entryJson(e: Entry) {
	return {
		id: e.id,
		title: e.title,
		componentKind: e.componentKind,
		partNumber: e.partNumber,
		package: e.package,
		assembly: e.assembly,
		testPoint: e.testPoint,
		symptom: e.symptom,
		symptomDetail: e.symptomDetail,
		cause: e.cause,
		fix: e.fix,
		body: e.body,
		tags: e.tags,
		status: e.status,
		version: e.version,
		author: e.authorId ? { id: e.authorId, name: e.authorName } : null,
		reviewerId: e.reviewerId,
		reviewComment: e.reviewComment,
		signatureClass: e.signatureClass,
		createdAt: e.createdAt.toISOString(),
		updatedAt: e.updatedAt.toISOString(),
		submittedAt: e.submittedAt?.toISOString() ?? null,
		publishedAt: e.publishedAt?.toISOString() ?? null
	};
}

export function traceJson(t: StoredTrace) {
	return {
		id: t.id,
		entryId: t.entryId,
		role: t.role,
		label: t.label,
		conditions: t.conditions,
		senseOhm: t.senseOhm,
		simulated: t.simulated,
		file: t.fileName ? { name: t.fileName, format: t.fileFormat, bytes: t.fileBytes } : null,
		samples: t.sampleCount,
		periods: t.periods,
		class: t.class,
		residual: t.residual,
		analysis: t.analysis,
		warnings: t.warnings,
		createdAt: t.createdAt.toISOString()
	};
}

export function revisionJson(r: Revision) {
	return { version: r.version, savedBy: r.savedBy ? { id: r.savedBy, name: r.savedByName } : null, savedAt: r.savedAt.toISOString(), note: r.note, fields: r.snapshot };
}

/** One step of the review history: who changed the status, when, from what to what, and why. */
export function reviewEventJson(e: ReviewEvent) {
	return {
		id: e.id,
		action: e.transition,
		from: e.fromStatus,
		to: e.toStatus,
		by: e.actorId ? { id: e.actorId, name: e.actorName } : null,
		comment: e.comment,
		at: e.at.toISOString()
	};
}
