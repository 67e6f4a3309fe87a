import { z } from 'zod';
import { testConditions } from '../signature/conditions';
import { SIGNATURE_CLASSES } from '../signature/types';

/**
 * Input rules for signature entries and their traces, shared by form actions, JSON endpoints and
 * the browser. The database's check constraints back the limits here.
 */

export const COMPONENT_KINDS = [
	'resistor',
	'capacitor',
	'electrolytic',
	'inductor',
	'diode',
	'zener',
	'transistor-junction',
	'ic-pin',
	'connector',
	'other'
] as const;
export type ComponentKind = (typeof COMPONENT_KINDS)[number];

export const COMPONENT_KIND_LABELS: Readonly<Record<ComponentKind, string>> = {
	resistor: 'Resistor',
	capacitor: 'Capacitor',
	electrolytic: 'Electrolytic capacitor',
	inductor: 'Inductor / winding',
	diode: 'Diode',
	zener: 'Zener',
	'transistor-junction': 'Transistor junction',
	'ic-pin': 'IC pin',
	connector: 'Connector / net',
	other: 'Other'
};

export const ENTRY_STATUSES = ['draft', 'in_review', 'published', 'archived'] as const;
export type EntryStatus = (typeof ENTRY_STATUSES)[number];

export const ENTRY_STATUS_LABELS: Readonly<Record<EntryStatus, string>> = {
	draft: 'Draft',
	in_review: 'In review',
	published: 'Published',
	archived: 'Archived'
};

/** Roles a stored trace plays in its entry; `query` is a capture saved from the match screen. */
export const TRACE_ROLES = ['fault', 'known-good', 'other'] as const;
export type TraceRole = (typeof TRACE_ROLES)[number] | 'query';

export const LIMITS = {
	title: 160,
	symptom: 200,
	shortField: 120,
	partNumber: 80,
	package: 40,
	markdown: 20_000,
	body: 100_000,
	tag: 32,
	tags: 20,
	comment: 2_000
} as const;

/** A tag: lowercase words joined by hyphens, e.g. `gate-driver`. */
export const TAG_PATTERN = /^[a-z0-9]+(?:-[a-z0-9]+)*$/;

const text = (max: number, what: string) =>
	z.string().trim().max(max, `Keep ${what} to ${max} characters or fewer.`);
const required = (max: number, what: string) =>
	z
		.string({ error: `Enter ${what}.` })
		.trim()
		.min(1, `Enter ${what}.`)
		.max(max, `Keep ${what} to ${max} characters or fewer.`);

/** An HTML checkbox ("on" when ticked, absent otherwise) or a JSON boolean. */
const checkbox = z.preprocess((v) => v === true || v === 'on' || v === 'true' || v === '1', z.boolean()).default(false);

/** Tags from a list or from one comma/space-separated string; normalised, de-duplicated. */
export const tagList = z
	.union([z.array(z.string()), z.string()])
	.transform((raw) =>
		(Array.isArray(raw) ? raw : raw.split(/[,\s]+/))
			.map((t) => t.trim().toLowerCase().replace(/\s+/g, '-'))
			.filter(Boolean)
	)
	.pipe(
		z
			.array(
				z
					.string()
					.max(LIMITS.tag, `Keep each tag to ${LIMITS.tag} characters or fewer.`)
					.regex(TAG_PATTERN, 'Tags use lowercase letters, digits and hyphens, like "gate-driver".')
			)
			.max(LIMITS.tags, `Use at most ${LIMITS.tags} tags.`)
			.transform((tags) => [...new Set(tags)])
	);

/** The rule of each field a person edits on an entry, without defaults. */
const fieldRules = {
	title: required(LIMITS.title, 'a title'),
	componentKind: z.enum(COMPONENT_KINDS, { error: 'Choose the kind of component.' }),
	partNumber: text(LIMITS.partNumber, 'the part number'),
	package: text(LIMITS.package, 'the package'),
	assembly: text(LIMITS.shortField, 'the assembly'),
	testPoint: text(LIMITS.shortField, 'the test point'),
	symptom: required(LIMITS.symptom, 'the symptom in one line'),
	symptomDetail: text(LIMITS.markdown, 'the symptom detail'),
	cause: text(LIMITS.markdown, 'the root cause'),
	fix: text(LIMITS.markdown, 'the fix'),
	body: text(LIMITS.body, 'the notes'),
	tags: tagList
};

/** Every field a person edits on an entry; the optional ones default to empty. */
/** The fields a writer edits, in the order forms, revisions and diffs show them. */
export const EDITABLE_FIELDS = [
	'title',
	'componentKind',
	'partNumber',
	'package',
	'assembly',
	'testPoint',
	'symptom',
	'symptomDetail',
	'cause',
	'fix',
	'body',
	'tags'
] as const;

export const entryFields = z.object({
	...fieldRules,
	partNumber: fieldRules.partNumber.default(''),
	package: fieldRules.package.default(''),
	assembly: fieldRules.assembly.default(''),
	testPoint: fieldRules.testPoint.default(''),
	symptomDetail: fieldRules.symptomDetail.default(''),
	cause: fieldRules.cause.default(''),
	fix: fieldRules.fix.default(''),
	body: fieldRules.body.default(''),
	tags: fieldRules.tags.default([])
});
export type EntryFields = z.infer<typeof entryFields>;
EDITABLE_FIELDS satisfies readonly (keyof EntryFields)[];

export const entryCreate = entryFields;
export type EntryCreate = z.infer<typeof entryCreate>;

/**
 * An update names the version it was based on, so a save over a newer version is refused. A field
 * left out keeps its stored value: the rules carry no defaults here, since zod applies a default
 * even inside `.partial()` and would blank every field the update did not name.
 */
export const entryUpdate = z.object(fieldRules).partial().extend({
	version: z.coerce.number({ error: 'The version being edited is missing.' }).int().min(1)
});
export type EntryUpdate = z.infer<typeof entryUpdate>;

export const ENTRY_TRANSITIONS = ['submit', 'publish', 'return', 'archive', 'reopen'] as const;
export type EntryTransition = (typeof ENTRY_TRANSITIONS)[number];

export const entryTransition = z.object({
	action: z.enum(ENTRY_TRANSITIONS, { error: 'Unknown status change.' }),
	comment: text(LIMITS.comment, 'the comment').default('')
});

const csv = z
	.union([z.array(z.string()), z.string()])
	.transform((v) => (Array.isArray(v) ? v : v.split(',')).map((s) => s.trim()).filter(Boolean));

/** Query string of the entry list (page and API share it). */
export const entryListQuery = z.object({
	status: csv.pipe(z.array(z.enum(ENTRY_STATUSES))).optional(),
	kind: csv.pipe(z.array(z.enum(COMPONENT_KINDS))).optional(),
	class: csv.pipe(z.array(z.enum(SIGNATURE_CLASSES as [string, ...string[]]))).optional(),
	tag: csv.pipe(z.array(z.string().max(LIMITS.tag))).optional(),
	author: z.string().max(64).optional(),
	assembly: z.string().max(LIMITS.shortField).optional(),
	q: z.string().max(200).optional(),
	sort: z.enum(['updated', 'created', 'title']).default('updated'),
	order: z.enum(['asc', 'desc']).default('desc'),
	limit: z.coerce.number().int().catch(25).transform((n) => Math.min(100, Math.max(1, n))),
	cursor: z.string().max(200).optional()
});
export type EntryListQuery = z.infer<typeof entryListQuery>;

/** Form/API fields that go with an uploaded capture (the file itself travels separately). */
export const traceUpload = testConditions.extend({
	role: z.enum(TRACE_ROLES, { error: 'Choose what this trace shows: fault, known-good or other.' }).default('fault'),
	label: text(LIMITS.shortField, 'the label').default(''),
	senseOhm: z.preprocess(
		(v) => (v === '' || v === null ? undefined : v),
		z.coerce.number({ error: 'Enter the sense resistance in ohms.' }).positive('The sense resistance must be above 0 Ω.').max(1e6).optional()
	),
	format: z.enum(['vi-csv', 'scope-csv', 'json']).optional().catch(undefined),
	voltageUnit: z.enum(['V', 'mV']).optional().catch(undefined),
	currentUnit: z.enum(['A', 'mA', 'uA']).optional().catch(undefined),
	swapChannels: checkbox,
	invertVoltage: checkbox,
	invertCurrent: checkbox
});
export type TraceUpload = z.infer<typeof traceUpload>;

/** Options of a match request, beside the capture and its conditions. */
export const matchOptions = z.object({
	limit: z.coerce.number().int().catch(10).transform((n) => Math.min(50, Math.max(1, n))).default(10),
	componentKind: z.enum(COMPONENT_KINDS).optional().catch(undefined),
	assembly: z.string().trim().max(LIMITS.shortField).optional(),
	tags: tagList.optional(),
	traceRole: z.enum(TRACE_ROLES).optional().catch(undefined),
	/** Keep the capture as a query trace, to attach to a new entry later. */
	save: checkbox
});

/** The Markdown fields of an entry, which the editor previews as the server will render them. */
export const PREVIEW_FIELDS = ['symptom', 'symptomDetail', 'cause', 'fix', 'body'] as const;
export type PreviewField = (typeof PREVIEW_FIELDS)[number];

/** A preview request: any of the entry's Markdown fields, each within its stored limit. */
export const markdownPreview = z.object({
	symptom: z.string().max(LIMITS.symptom, `Keep the symptom to ${LIMITS.symptom} characters or fewer.`).optional(),
	symptomDetail: z.string().max(LIMITS.markdown, `Keep the symptom detail to ${LIMITS.markdown} characters or fewer.`).optional(),
	cause: z.string().max(LIMITS.markdown, `Keep the root cause to ${LIMITS.markdown} characters or fewer.`).optional(),
	fix: z.string().max(LIMITS.markdown, `Keep the fix to ${LIMITS.markdown} characters or fewer.`).optional(),
	body: z.string().max(LIMITS.body, `Keep the notes to ${LIMITS.body} characters or fewer.`).optional()
});
export type MarkdownPreview = z.infer<typeof markdownPreview>;
/** The preview endpoint's answer: the same keys, as sanitised HTML. */
export type RenderedParts = Partial<Record<PreviewField, string>>;

/** Sending an entry back to its writer needs a reason. */
export const entryReturn = z.object({
	id: z.uuid({ error: 'That entry no longer exists.' }),
	comment: required(LIMITS.comment, 'what should change')
});
export const entryRef = z.object({ id: z.uuid({ error: 'That entry no longer exists.' }) });
