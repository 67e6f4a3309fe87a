/**
 * The entry table's filters as URL search parameters, shared by the server load, the client-side
 * refresh and the links (tags, pages), so every view of the table has one shareable URL.
 */
export const FILTER_KEYS = ['q', 'status', 'kind', 'class', 'tag', 'author', 'assembly', 'sort', 'order'] as const;
export type FilterKey = (typeof FILTER_KEYS)[number];
export type Filters = Partial<Record<FilterKey, string>>;

/** The sort choices the table offers, each a `sort` + `order` pair of the list API. */
export const SORT_CHOICES = [
	{ value: 'updated:desc', label: 'Recently updated' },
	{ value: 'updated:asc', label: 'Least recently updated' },
	{ value: 'created:desc', label: 'Newest first' },
	{ value: 'created:asc', label: 'Oldest first' },
	{ value: 'title:asc', label: 'Title A–Z' },
	{ value: 'title:desc', label: 'Title Z–A' }
] as const;

const DEFAULTS: Filters = { sort: 'updated', order: 'desc' };

/** Non-empty filters, without the defaults, in a fixed order (so equal views have equal URLs). */
export function filterParams(filters: Filters, extra: Record<string, string | null | undefined> = {}): URLSearchParams {
	const params = new URLSearchParams();
	for (const key of FILTER_KEYS) {
		const value = filters[key]?.trim();
		if (value && value !== DEFAULTS[key]) params.set(key, value);
	}
	for (const [key, value] of Object.entries(extra)) if (value) params.set(key, value);
	return params;
}

/** Reads the table's filters from a form (the `sort` select carries "sort:order"). */
export function filtersFromForm(form: FormData): Filters {
	const filters: Filters = {};
	for (const key of FILTER_KEYS) {
		const value = form.get(key);
		if (typeof value === 'string' && value.trim()) filters[key] = value.trim();
	}
	const sort = filters.sort;
	if (sort?.includes(':')) {
		const [by, order] = sort.split(':');
		filters.sort = by;
		filters.order = order;
	}
	return filters;
}

/** A query string for the table: `?kind=diode&tag=gate-drive`, or '' when nothing is set. */
export function filterSearch(filters: Filters, extra: Record<string, string | null | undefined> = {}): string {
	const s = filterParams(filters, extra).toString();
	return s ? `?${s}` : '';
}
