import { type Kysely, sql } from 'kysely';
import type { ComponentKind, EntryFields } from '../../schemas/entries';
import { formatConditions } from '../../signature/format';
import type { Analysis, SignatureClass, TestConditions } from '../../signature/types';
import type { MemberContext } from '../auth/member';
import type { Database } from '../db/connect';
import type { Reader } from '../entries/queries';
import { findEntriesByIds } from '../entries/queries';
import { readerFor } from '../entries/rules';
import { attachQueryTrace, createEntry } from '../entries/service';
import { stripMarkdown } from '../markdown';
import { insertTrace, type ProcessedTrace } from '../traces/service';
import { type MatchFilters, type MatchIndexes, rankTraces } from './registry';

/**
 * "Has anyone seen this curve?" as units of work shared by the match page's form actions and the
 * JSON endpoint: rank stored traces for a capture, remember a member's bench conditions, and write
 * a draft entry from a capture nobody has seen yet.
 */

/** One ranked stored trace with the entry it belongs to. */
export interface MatchCard {
	entry: { id: string; title: string; symptom: string; fix: string; status: string; componentKind: string };
	trace: { id: string; role: string; conditions: TestConditions; canonical: { v: number[]; i: number[] } };
	/** 0–100, one decimal. */
	similarity: number;
	distance: number;
	comparable: boolean;
}

export async function matchCapture(
	db: Kysely<Database>,
	indexes: MatchIndexes,
	member: MemberContext,
	processed: ProcessedTrace,
	options: { limit: number; filters?: MatchFilters }
): Promise<MatchCard[]> {
	const reader = readerFor(member);
	const ranked = await rankTraces(db, indexes, member.orgId, reader, processed.curve, options);
	const entries = await findEntriesByIds(db, member.orgId, [...new Set(ranked.map((r) => r.entryId))], reader);
	return ranked
		.filter((r) => entries.has(r.entryId))
		.map((r) => {
			const e = entries.get(r.entryId)!;
			return {
				entry: { id: e.id, title: e.title, symptom: e.symptom, fix: e.fix, status: e.status, componentKind: e.componentKind },
				trace: { id: r.traceId, role: r.role, conditions: r.curve.conditions, canonical: { v: r.curve.v, i: r.curve.i } },
				similarity: Math.round(r.comparison.similarity * 10) / 10,
				distance: r.comparison.distance,
				comparable: r.comparison.comparable
			};
		});
}

/** What the match screen and the API say about the capture itself: its reading and canonical curve. */
export function captureSummary(p: ProcessedTrace) {
	return {
		format: p.format,
		samples: p.sampleCount,
		periods: p.curve.periods,
		conditions: p.conditions,
		analysis: p.analysis,
		warnings: p.warnings,
		canonical: { v: p.curve.v, i: p.curve.i }
	};
}

/** The fix as one plain line for a result card (the entry page renders the full Markdown). */
export function fixSummary(markdown: string, max = 180): string {
	const text = stripMarkdown(markdown).replace(/\s+/g, ' ').trim();
	return text.length <= max ? text : `${text.slice(0, max - 1).trimEnd()}…`;
}

/** Traces the reader could be matched against: attached to a live entry they may see. */
export async function countMatchableTraces(db: Kysely<Database>, orgId: string, reader: Reader): Promise<number> {
	let q = db
		.selectFrom('trace')
		.innerJoin('entry', 'entry.id', 'trace.entryId')
		.select(sql<number>`count(*)::int`.as('n'))
		.where('trace.orgId', '=', orgId)
		.where('entry.orgId', '=', orgId)
		.where('entry.deletedAt', 'is', null);
	if (!reader.seesAll) {
		q = q.where((eb) =>
			reader.seesOwn
				? eb.or([eb('entry.status', '=', 'published'), eb('entry.authorId', '=', reader.userId)])
				: eb('entry.status', '=', 'published')
		);
	}
	return (await q.executeTakeFirstOrThrow()).n;
}

/** A member's remembered bench settings for one organisation. */
export interface MatchPreference {
	conditions: TestConditions;
	senseOhm: number | null;
}

export async function findMatchPreference(db: Kysely<Database>, orgId: string, userId: string): Promise<MatchPreference | undefined> {
	const r = await db
		.selectFrom('matchPreference')
		.select(['sourcePeakV', 'sourceResistanceOhm', 'frequencyHz', 'senseOhm'])
		.where('orgId', '=', orgId)
		.where('userId', '=', userId)
		.executeTakeFirst();
	return r
		? { conditions: { sourcePeakV: r.sourcePeakV, sourceResistanceOhm: r.sourceResistanceOhm, frequencyHz: r.frequencyHz }, senseOhm: r.senseOhm }
		: undefined;
}

export async function saveMatchPreference(db: Kysely<Database>, orgId: string, userId: string, p: MatchPreference): Promise<void> {
	const values = {
		sourcePeakV: p.conditions.sourcePeakV,
		sourceResistanceOhm: p.conditions.sourceResistanceOhm,
		frequencyHz: p.conditions.frequencyHz,
		senseOhm: p.senseOhm
	};
	await db
		.insertInto('matchPreference')
		.values({ orgId, userId, ...values })
		.onConflict((oc) => oc.columns(['orgId', 'userId']).doUpdateSet({ ...values, updatedAt: sql`now()` }))
		.execute();
}

/** The component kind a fresh draft starts with, from the engine's class (the writer corrects it). */
export const KIND_FOR_CLASS: Readonly<Record<SignatureClass, ComponentKind>> = {
	open: 'other',
	short: 'other',
	resistive: 'resistor',
	capacitive: 'capacitor',
	inductive: 'inductor',
	junction: 'diode',
	zener: 'zener',
	complex: 'other'
};

/** The fields of a draft written from an unknown capture: what the engine read, no symptom yet. */
export function draftFieldsFor(analysis: Analysis, conditions: TestConditions): EntryFields {
	return {
		title: `Unknown signature — ${analysis.class} at ${formatConditions(conditions)}`,
		componentKind: KIND_FOR_CLASS[analysis.class],
		partNumber: '',
		package: '',
		assembly: '',
		testPoint: '',
		symptom: '',
		symptomDetail: '',
		cause: '',
		fix: '',
		body: `The engine read this capture as **${analysis.class}**: ${analysis.summary}.\n\nNo stored signature matched it when this draft was written.`,
		tags: []
	};
}

/**
 * Writes a draft entry from a capture: the capture is saved as a query trace (as the match
 * endpoint's `save` option does), a draft is created through the entries service, and the capture
 * is re-homed onto it as its fault trace. Returns the new entry's id.
 */
export async function writeDraftFromCapture(
	db: Kysely<Database>,
	member: MemberContext,
	processed: ProcessedTrace,
	file: { name: string; bytes: Uint8Array },
	label: string
): Promise<string> {
	const traceId = await insertTrace(db, member.orgId, {
		entryId: null,
		role: 'query',
		label,
		createdBy: member.userId,
		processed,
		file
	});
	const entry = await createEntry(db, member, draftFieldsFor(processed.analysis, processed.conditions));
	const attached = await attachQueryTrace(db, member, traceId, entry.id, 'fault', label || 'As found');
	if (attached.kind !== 'attached') throw new Error(`a fresh draft refused its own capture (${attached.kind})`);
	return entry.id;
}
