import { popularityOf, type EntryDocument } from '../../search/settings';

/** Invented organisations and entries for the search tests (demo-style data, no real parts makers). */
export const ORG_A = '00000000-0000-4000-8000-00000000000a';
export const ORG_B = '00000000-0000-4000-8000-00000000000b';
/** The user who wrote every fixture entry, and one who wrote none. */
export const WRITER = '00000000-0000-4000-8000-0000000000e1';
export const OTHER_USER = '00000000-0000-4000-8000-0000000000e2';

export function entryDoc(id: string, fields: Partial<EntryDocument>): EntryDocument {
	const views = fields.views ?? 0;
	const helpedCount = fields.helpedCount ?? 0;
	return {
		id,
		orgId: ORG_A,
		status: 'published',
		authorId: WRITER,
		componentKind: null,
		class: null,
		tags: [],
		assembly: null,
		partNumber: null,
		title: '',
		symptom: '',
		cause: '',
		fix: '',
		body: '',
		traceClasses: [],
		createdAt: 1_000,
		updatedAt: 1_000,
		publishedAt: 1_000,
		views,
		helpedCount,
		popularity: popularityOf(views, helpedCount),
		...fields
	};
}

/**
 * Four entries of organisation A and one of B. The trade facts in the text (a leaky capacitor
 * tilts its ellipse, a short is a vertical line, an open a flat one, a zener shows two knees) are
 * common practice, no source.
 */
export const FIXTURES: EntryDocument[] = [
	entryDoc('leaky-cap', {
		title: 'Leaky electrolytic capacitor on the gate driver',
		symptom: 'The ellipse tilts toward the current axis at 10 V, 1 kΩ, 60 Hz.',
		cause: 'Electrolyte dried out after years beside the heat sink.',
		fix: 'Replace C41 with a 105 °C part.',
		componentKind: 'capacitor',
		class: 'capacitive',
		tags: ['power', 'gate-driver'],
		assembly: 'PSU-200',
		partNumber: 'C41',
		traceClasses: ['capacitive'],
		createdAt: 1_000,
		updatedAt: 3_000,
		publishedAt: 2_000,
		views: 40,
		helpedCount: 3
	}),
	entryDoc('soft-zener', {
		title: 'Zener knee too soft at breakdown',
		symptom: 'Two knees, but the reverse one bends slowly instead of turning sharply.',
		cause: 'Overstressed reference diode.',
		fix: 'Replace D7.',
		componentKind: 'zener',
		class: 'junction',
		tags: ['reference'],
		assembly: 'CTRL-7',
		partNumber: '1N4733',
		traceClasses: ['zener'],
		createdAt: 2_000,
		updatedAt: 5_000,
		publishedAt: 4_000,
		views: 200,
		helpedCount: 12
	}),
	entryDoc('bulk-short', {
		status: 'draft',
		title: 'Dead short across the bulk capacitor',
		symptom: 'A vertical line through the origin on the input rail.',
		cause: 'Cracked ceramic in parallel with the bulk cap.',
		fix: 'Lift each part in turn until the line tilts.',
		componentKind: 'capacitor',
		class: 'short',
		tags: ['power'],
		assembly: 'PSU-200',
		traceClasses: ['short'],
		createdAt: 3_000,
		updatedAt: 4_000,
		publishedAt: null,
		views: 2
	}),
	entryDoc('open-reset', {
		title: 'Open trace to the reset pin',
		symptom: 'Flat line on U3 pin 4: no continuity to the header.',
		cause: 'Corroded via under the connector.',
		fix: 'Bridge the via with a wire.',
		componentKind: 'ic-pin',
		class: 'open',
		tags: ['logic'],
		assembly: 'CTRL-7',
		traceClasses: ['open'],
		createdAt: 4_000,
		updatedAt: 1_000,
		publishedAt: 1_500,
		views: 90,
		helpedCount: 1
	}),
	entryDoc('b-secret', {
		orgId: ORG_B,
		title: 'Marrowfield sensor capacitor leaking on the quillback board',
		symptom: 'Tilted ellipse on the marrowfield input.',
		componentKind: 'capacitor',
		class: 'capacitive',
		tags: ['marrowfield-only'],
		assembly: 'QB-1',
		traceClasses: ['capacitive'],
		createdAt: 1_000,
		updatedAt: 2_000,
		publishedAt: 2_000,
		views: 5
	})
];
