import { describe, expect, it } from 'vitest';
import { apiTokenCreate, invitationCreate, orgCreate, orgRename, RESERVED_SLUGS, SLUG_PATTERN, suggestSlug } from './orgs';

/** Every message per field, joined, as a form would list them beside the field. */
function fieldErrors(r: { success: boolean; error?: { issues: { path: PropertyKey[]; message: string }[] } }) {
	const out: Record<string, string> = {};
	for (const i of r.error?.issues ?? []) out[String(i.path[0])] = [out[String(i.path[0])], i.message].filter(Boolean).join(' ');
	return out;
}

describe('orgCreate', () => {
	it('accepts a name and a well-formed slug, normalising case and spaces', () => {
		const r = orgCreate.safeParse({ name: '  Bench Two Repairs ', slug: ' Bench-Two ' });
		expect(r.success && r.data).toEqual({ name: 'Bench Two Repairs', slug: 'bench-two' });
	});

	it.each([
		['ab', 'at least 3'],
		['-bench', 'start and end'],
		['bench-', 'start and end'],
		['bench two', 'lowercase letters'],
		['bench_two', 'lowercase letters'],
		['a'.repeat(41), '40 characters'],
		['api', 'reserved'],
		['login', 'reserved'],
		['new', 'reserved'],
		['static', 'reserved']
	])('refuses the slug %j with a message about %s', (slug, message) => {
		const r = orgCreate.safeParse({ name: 'Bench', slug });
		expect(r.success).toBe(false);
		expect(fieldErrors(r).slug).toContain(message);
	});

	it('refuses an empty or oversized name', () => {
		expect(fieldErrors(orgCreate.safeParse({ name: '   ', slug: 'bench' })).name).toContain('Enter a name');
		expect(fieldErrors(orgCreate.safeParse({ name: 'x'.repeat(121), slug: 'bench' })).name).toContain('120');
	});

	it('keeps every reserved word within the slug shape, so the reserved check is what refuses it', () => {
		for (const word of RESERVED_SLUGS) expect(SLUG_PATTERN.test(word)).toBe(true);
	});
});

describe('orgRename', () => {
	it('trims the name and applies the same rules as creating an organisation', () => {
		expect(orgRename.safeParse({ name: '  Bench Two Repairs, east wing ' })).toMatchObject({ success: true, data: { name: 'Bench Two Repairs, east wing' } });
		expect(fieldErrors(orgRename.safeParse({ name: ' \t ' })).name).toContain('Enter a name');
		expect(fieldErrors(orgRename.safeParse({})).name).toContain('Enter a name');
		expect(orgRename.safeParse({ name: 'x'.repeat(120) }).success).toBe(true);
		expect(fieldErrors(orgRename.safeParse({ name: 'x'.repeat(121) })).name).toContain('120');
	});

	it('takes no address: a slug sent along is ignored, never applied', () => {
		expect(orgRename.safeParse({ name: 'Bench', slug: 'other' })).toEqual({ success: true, data: { name: 'Bench' } });
	});
});

describe('invitationCreate', () => {
	it('lower-cases the address and accepts the four roles', () => {
		const r = invitationCreate.safeParse({ email: ' Tech.Two@Example.COM ', role: 'author' });
		expect(r.success && r.data).toEqual({ email: 'tech.two@example.com', role: 'author' });
	});

	it.each(['not-an-address', 'a@b', '@example.com', `${'x'.repeat(250)}@example.com`])('refuses the address %j', (email) => {
		expect(fieldErrors(invitationCreate.safeParse({ email, role: 'viewer' })).email).toBeDefined();
	});

	it('refuses an unknown role', () => {
		expect(fieldErrors(invitationCreate.safeParse({ email: 'a@example.com', role: 'owner' })).role).toContain('roles listed');
	});
});

describe('apiTokenCreate', () => {
	it('needs a name of at most 60 characters', () => {
		expect(apiTokenCreate.safeParse({ name: 'Bench PC 3', org: 'fernhollow', role: 'viewer' }).success).toBe(true);
		expect(fieldErrors(apiTokenCreate.safeParse({ name: 'x'.repeat(61), org: 'fernhollow', role: 'viewer' })).name).toContain('60');
	});
});

describe('suggestSlug', () => {
	it('turns a name into a slug the schema accepts', () => {
		expect(suggestSlug('Müller & Söhne Repairs')).toBe('muller-sohne-repairs');
		expect(SLUG_PATTERN.test(suggestSlug(`  ${'Long name '.repeat(10)}`))).toBe(true);
	});
});
