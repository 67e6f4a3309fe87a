/**
 * How entries refer to their photos. The Markdown form is stable: `![alt](/api/v1/orgs/<org>/photos/<id>)`,
 * a root-relative URL under the organisation's photo prefix, which is the only place the Markdown
 * renderer takes images from (its `attachmentPrefix`). Shared by the server and the uploader.
 */

/** Where the organisation's photos are served; pass it to the renderer as `attachmentPrefix`. */
export function photoUrlPrefix(orgSlug: string): string {
	return `/api/v1/orgs/${orgSlug}/photos/`;
}

export function photoUrl(orgSlug: string, photoId: string): string {
	return `${photoUrlPrefix(orgSlug)}${photoId}`;
}

/** Alt text from a file name: "C12 top side.jpg" → "C12 top side". */
export function altFromFileName(fileName: string): string {
	const base = fileName.replace(/\.[A-Za-z0-9]{1,5}$/, '').replace(/[_-]+/g, ' ').trim();
	return base || 'Photo';
}

/** The Markdown that shows the photo in an entry's text. Brackets in the alt text are escaped. */
export function photoMarkdown(orgSlug: string, photo: { id: string; fileName: string }, alt = altFromFileName(photo.fileName)): string {
	const safeAlt = alt.replace(/[\\[\]]/g, (c) => `\\${c}`).replace(/\s+/g, ' ');
	return `![${safeAlt}](${photoUrl(orgSlug, photo.id)})`;
}

/** Photo URLs of any organisation inside Markdown: group 1 is the slug, group 2 the id. */
export const PHOTO_URL_PATTERN = /\/api\/v1\/orgs\/([a-z0-9](?:[a-z0-9-]*[a-z0-9])?)\/photos\/([0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12})/g;

/**
 * Rewrites photo references from one organisation to another, by id (for an import). References
 * to photos not in `ids` are left as they are: the renderer shows them as alt text.
 */
export function rewritePhotoUrls(markdown: string, fromSlug: string, toSlug: string, ids: ReadonlyMap<string, string>): string {
	return markdown.replace(PHOTO_URL_PATTERN, (whole, slug: string, id: string) => {
		const to = ids.get(id.toLowerCase());
		return slug === fromSlug && to ? photoUrl(toSlug, to) : whole;
	});
}
