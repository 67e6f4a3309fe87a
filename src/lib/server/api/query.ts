/** A URL's query as a plain object; repeated keys become arrays (`?tag=a&tag=b`). */
export function queryObject(url: URL): Record<string, string | string[]> {
	const out: Record<string, string | string[]> = {};
	for (const key of new Set(url.searchParams.keys())) {
		const values = url.searchParams.getAll(key);
		out[key] = values.length > 1 ? values : values[0];
	}
	return out;
}
