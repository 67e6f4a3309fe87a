import type { MarkdownPreview, RenderedParts } from '../../schemas/entries';
import { renderInline, renderMarkdown, renderMarkdownUncached } from '../markdown';

/**
 * Where an organisation's photos are served; entry Markdown may show images from there only.
 * The photo uploader inserts `![alt](/api/v1/orgs/<org>/photos/<id>)`, so this is that prefix.
 */
export function attachmentPrefixOf(orgSlug: string): string {
	return `/api/v1/orgs/${orgSlug}/photos/`;
}

export type { RenderedParts };

/**
 * An entry's Markdown fields as sanitised HTML, exactly as the entry page shows them: the symptom
 * line inline, the rest as blocks. `transient` skips the render cache, for previews of text that
 * is still being typed (it would only push stored entries out of the cache).
 */
export function renderEntryParts(parts: MarkdownPreview, orgSlug: string, transient = false): RenderedParts {
	const options = { attachmentPrefix: attachmentPrefixOf(orgSlug) };
	const block = transient ? renderMarkdownUncached : renderMarkdown;
	const out: RenderedParts = {};
	if (parts.symptom !== undefined) out.symptom = renderInline(parts.symptom, options);
	for (const key of ['symptomDetail', 'cause', 'fix', 'body'] as const) {
		const source = parts[key];
		if (source !== undefined) out[key] = source.trim() === '' ? '' : block(source, options);
	}
	return out;
}
