import { replaceState } from '$app/navigation';
import { page } from '$app/state';
import type { SearchResultJson } from '$lib/server/search/entry-search';

/** How long typing must pause before the page asks the server. */
export const DEBOUNCE_MS = 150;

/**
 * Search as you type: the form is the one source of truth; this serialises it, asks
 * `GET /api/v1/orgs/{org}/search`, aborts the request in flight when a newer one starts, and keeps
 * the address bar in step (replaceState, so Back still leaves the page in one step).
 */
export class LiveSearch {
	/** The newest answer, or null until the first search made on this page. */
	result = $state<SearchResultJson | null>(null);
	pending = $state(false);
	problem = $state<string | null>(null);

	#timer: ReturnType<typeof setTimeout> | undefined;
	#inFlight: AbortController | undefined;

	constructor(private readonly org: string) {}

	/** Searches after typing pauses. */
	schedule(form: HTMLFormElement): void {
		clearTimeout(this.#timer);
		this.#timer = setTimeout(() => void this.run(form), DEBOUNCE_MS);
	}

	/** Forgets the live answer (after a navigation brought fresh server data). */
	reset(): void {
		clearTimeout(this.#timer);
		this.#inFlight?.abort();
		this.result = null;
		this.problem = null;
		this.pending = false;
	}

	/** Searches now, with what the form holds. */
	async run(form: HTMLFormElement): Promise<void> {
		clearTimeout(this.#timer);
		this.#inFlight?.abort();
		const controller = new AbortController();
		this.#inFlight = controller;
		const params = new URLSearchParams();
		for (const [key, value] of new FormData(form)) {
			if (typeof value !== 'string') continue;
			if (key === 'q' ? value.trim() : key !== 'sort' || value !== 'relevance') params.append(key, key === 'q' ? value.trim() : value);
		}
		this.pending = true;
		try {
			const res = await fetch(`/api/v1/orgs/${this.org}/search?${params}`, { signal: controller.signal, headers: { accept: 'application/json' } });
			const body = await res.json().catch(() => null);
			if (controller.signal.aborted) return;
			if (!res.ok) {
				this.problem = body?.error?.message ?? 'Search failed. Try again in a moment.';
				return;
			}
			this.problem = null;
			this.result = body as SearchResultJson;
			const url = new URL(page.url);
			url.search = params.toString();
			replaceState(url, page.state);
		} catch (e) {
			if ((e as Error).name === 'AbortError') return;
			this.problem = 'Could not reach the server. Check the connection; your search is kept.';
		} finally {
			if (this.#inFlight === controller) {
				this.pending = false;
				this.#inFlight = undefined;
			}
		}
	}
}
