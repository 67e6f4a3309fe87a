import { json } from '@sveltejs/kit';
import { markdownPreview } from '$lib/schemas/entries';
import { apiError, readJson, toApiIssues } from '$lib/server/api/errors';
import { requireMember } from '$lib/server/auth/guard';
import { renderEntryParts } from '$lib/server/entries/render';
import type { RequestHandler } from './$types';

/** Largest preview request: every field at its limit, with room for JSON escaping. */
const MAX_BYTES = 512 * 1024;

/**
 * `{ symptom?, symptomDetail?, cause?, fix?, body? }` (Markdown) → the same keys as sanitised HTML,
 * rendered by the renderer and sanitiser the entry page uses, so the preview cannot differ from
 * what readers will see, and nothing typed into it ever runs.
 */
export const POST: RequestHandler = async ({ params, request }) => {
	const member = await requireMember(params.org, 'entry:draft');
	// Refused before reading when the declared size is already too large; readJson caps the rest.
	if (Number(request.headers.get('content-length') ?? 0) > MAX_BYTES) {
		return apiError(413, 'too_large', 'The text is too long to preview (at most 512 kB).');
	}
	const body = await readJson(request, MAX_BYTES);
	if (body === undefined) return apiError(400, 'invalid_input', 'Send the text to preview as a JSON object (at most 512 kB).');
	const parsed = markdownPreview.safeParse(body);
	if (!parsed.success) return apiError(400, 'invalid_input', 'Some text is too long to preview.', toApiIssues(parsed.error.issues));
	return json({ html: renderEntryParts(parsed.data, member.orgSlug, true) }, { headers: { 'cache-control': 'no-store' } });
};
