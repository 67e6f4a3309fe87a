import type { EntryFormValues } from '$lib/entry-form';
import { PREVIEW_FIELDS, type RenderedParts } from '$lib/schemas/entries';

export const PREVIEW_DELAY_MS = 400;

/**
 * The live preview: after typing pauses, the Markdown fields go to the server, which renders and
 * sanitises them exactly as the entry page will. The browser never renders Markdown itself, so
 * the preview cannot show something readers would not see, and typed HTML never runs.
 */
export class MarkdownPreview {
	html: RenderedParts = $state({});
	phase: 'idle' | 'waiting' | 'error' = $state('idle');
	#timer: ReturnType<typeof setTimeout> | undefined;
	#abort: AbortController | undefined;
	#last = '';
	readonly #url: string;

	constructor(org: string, initial: RenderedParts) {
		this.#url = `/api/v1/orgs/${org}/markdown/preview`;
		this.html = initial;
	}

	/** Call after every edit; the newest text wins. */
	request(values: EntryFormValues): void {
		const parts = Object.fromEntries(PREVIEW_FIELDS.map((k) => [k, values[k]]));
		const key = JSON.stringify(parts);
		if (key === this.#last) return;
		clearTimeout(this.#timer);
		this.phase = 'waiting';
		this.#timer = setTimeout(() => void this.#fetch(key), PREVIEW_DELAY_MS);
	}

	async #fetch(key: string): Promise<void> {
		this.#abort?.abort();
		const abort = (this.#abort = new AbortController());
		try {
			const res = await fetch(this.#url, { method: 'POST', headers: { 'content-type': 'application/json' }, body: key, signal: abort.signal });
			if (!res.ok) throw new Error(String(res.status));
			this.html = ((await res.json()) as { html: RenderedParts }).html;
			this.#last = key;
			this.phase = 'idle';
		} catch {
			// An aborted request was replaced by a newer one; anything else keeps the last preview.
			if (!abort.signal.aborted) this.phase = 'error';
		}
	}

	dispose(): void {
		clearTimeout(this.#timer);
		this.#abort?.abort();
	}
}
