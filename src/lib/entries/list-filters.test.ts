import { describe, expect, it } from 'vitest';
import { filterParams, filterSearch, filtersFromForm } from './list-filters';

describe('entry table URLs', () => {
	it('leaves out empty values and the default sort, in a fixed order', () => {
		expect(filterSearch({ tag: 'gate-drive', kind: 'diode', q: '  ', sort: 'updated', order: 'desc' })).toBe('?kind=diode&tag=gate-drive');
		expect(filterSearch({})).toBe('');
	});

	it('keeps a non-default sort and extra parameters such as the cursor', () => {
		expect(filterParams({ sort: 'title', order: 'asc' }, { cursor: 'abc', none: null }).toString()).toBe('sort=title&order=asc&cursor=abc');
	});

	it('splits the combined sort choice of the form', () => {
		const form = new FormData();
		form.set('sort', 'created:asc');
		form.set('q', ' leaky ');
		form.set('status', '');
		expect(filtersFromForm(form)).toEqual({ q: 'leaky', sort: 'created', order: 'asc' });
	});
});
