import { z } from 'zod';
import { deviceModel } from '../signature/simulate';
import { testConditions } from '../signature/conditions';
import { CANONICAL_POINTS } from '../signature/types';
import { PHOTO_TYPES } from '../photos/image-check';
import { ENTRY_STATUSES, entryFields, TRACE_ROLES } from './entries';

/**
 * The export/import bundle: one JSON file that carries entries with everything attached to them
 * (traces with their original files, photos with their bytes) from one organisation to another.
 * Photos and capture files travel inline as base64 beside the entry they belong to, so a bundle
 * is complete on its own: nothing can go missing between a listing and separate downloads, and
 * one size limit covers it. See README ("Export and import") for the format.
 */
export const BUNDLE_FORMAT = 'curvelore-bundle';
export const BUNDLE_VERSION = 1;

/** Largest bundle accepted by the import (under the server's 25 MB request limit). */
export const MAX_BUNDLE_BYTES = 24 * 1024 * 1024;
export const MAX_BUNDLE_ENTRIES = 2000;

const BASE64 = /^[A-Za-z0-9+/]*={0,2}$/;
const base64 = (maxBytes: number) =>
	z
		.string()
		.max(Math.ceil(maxBytes / 3) * 4 + 4, 'The attached file is larger than allowed.')
		.regex(BASE64, 'Must be base64 (A–Z, a–z, 0–9, + and /).');
const sha256 = z.string().regex(/^[0-9a-f]{64}$/, 'Must be a SHA-256 hex digest.');
const isoDate = z.iso.datetime({ offset: true, error: 'Must be an ISO 8601 date and time.' }).transform((s) => new Date(s));
const finite = z.number().refine(Number.isFinite, 'Must be a finite number.');
/** An id as the source organisation had it: only for references inside the bundle. */
const ref = z.string().min(1).max(64);

export const bundlePhoto = z.object({
	ref,
	fileName: z.string().min(1).max(200),
	contentType: z.enum(PHOTO_TYPES),
	bytes: z.number().int().positive(),
	sha256,
	width: z.number().int().positive().nullable(),
	height: z.number().int().positive().nullable(),
	createdAt: isoDate,
	data: base64(8 * 1024 * 1024)
});

export const bundleTrace = z.object({
	ref,
	role: z.enum(TRACE_ROLES),
	label: z.string().max(120).default(''),
	conditions: testConditions,
	senseOhm: z.number().positive().nullable().default(null),
	simulated: z.boolean(),
	model: deviceModel.nullable().default(null),
	file: z
		.object({ name: z.string().min(1).max(200), format: z.string().max(20).nullable(), bytes: z.number().int().nonnegative(), sha256, data: base64(20 * 1024 * 1024) })
		.nullable(),
	sampleCount: z.number().int().nonnegative(),
	periods: z.number().int().nonnegative(),
	/** One period on the canonical phase grid, SI units (V and A). */
	canonical: z.object({
		v: z.array(finite).length(CANONICAL_POINTS),
		i: z.array(finite).length(CANONICAL_POINTS),
		periodSpread: finite.nullable().default(null)
	}),
	/** As analysed by the exporting server; the importing server analyses the curve again. */
	analysis: z.unknown().optional(),
	warnings: z.array(z.string().max(500)).max(50).default([]),
	createdAt: isoDate
});

export const bundleEntry = z.object({
	ref,
	fields: entryFields,
	status: z.enum(ENTRY_STATUSES),
	/** Who wrote it in the source organisation (kept for the record; the importer becomes the author). */
	authorName: z.string().max(200).nullable(),
	reviewComment: z.string().max(2000).nullable().default(null),
	createdAt: isoDate,
	updatedAt: isoDate,
	submittedAt: isoDate.nullable().default(null),
	publishedAt: isoDate.nullable().default(null),
	traces: z.array(bundleTrace).max(100).default([]),
	photos: z.array(bundlePhoto).max(40).default([])
});

export const bundle = z.object({
	format: z.literal(BUNDLE_FORMAT, { error: `This is not a Curvelore bundle (expected "format": "${BUNDLE_FORMAT}").` }),
	version: z.literal(BUNDLE_VERSION, { error: `This bundle's format version is not supported: this server reads version ${BUNDLE_VERSION}.` }),
	exportedAt: isoDate,
	source: z.object({
		organisation: z.object({ slug: z.string().max(40), name: z.string().max(200) }),
		scope: z.enum(['organisation', 'entry'])
	}),
	entries: z.array(bundleEntry).max(MAX_BUNDLE_ENTRIES, `A bundle holds at most ${MAX_BUNDLE_ENTRIES} entries.`)
});
export type Bundle = z.infer<typeof bundle>;
export type BundleInput = z.input<typeof bundle>;
export type BundleEntry = z.infer<typeof bundleEntry>;

/** What to do with an entry whose title and assembly the organisation already has. */
export const IMPORT_CONFLICT_POLICIES = ['skip', 'copy'] as const;
export const importOptions = z.object({
	onConflict: z.enum(IMPORT_CONFLICT_POLICIES).catch('skip').default('skip')
});
export type ImportOptions = z.infer<typeof importOptions>;
