import { type EntryFormValues, FIELD_LABELS, type FieldErrors, fieldErrorsOf, formValuesOf, sameValues } from '$lib/entry-form';
import type { EntryStatus } from '$lib/schemas/entries';

/**
 * The editor's client state: the values as typed, the version they are based on, and saving
 * through the JSON API. Drafts save themselves once typing pauses; other entries (already
 * published, say) only on an explicit save, so a half-typed change never goes live. A save over
 * a newer stored version is refused by the server and kept here as a conflict until the writer
 * chooses a side; nothing is overwritten silently.
 */

export type SavePhase = 'idle' | 'pending' | 'saving' | 'saved' | 'invalid' | 'error' | 'conflict' | 'locked';

/** The stored side of a conflict. */
export interface StoredSide {
	version: number;
	values: EntryFormValues;
	updatedAt: string;
}

export const AUTOSAVE_DELAY_MS = 1500;
const RETRY_DELAY_MS = 10_000;

export interface DraftOptions {
	org: string;
	id: string | null;
	version: number;
	status: EntryStatus;
	values: EntryFormValues;
	/** Called once, when the first save creates the entry. */
	onCreated?: (id: string) => void;
}

interface ApiEntry {
	id: string;
	version: number;
	status: EntryStatus;
	[field: string]: unknown;
}

export class EntryDraft {
	values: EntryFormValues = $state({} as EntryFormValues);
	id: string | null = $state(null);
	version = $state(0);
	status: EntryStatus = $state('draft');
	phase: SavePhase = $state('idle');
	savedAt: Date | null = $state(null);
	message = $state('');
	fieldErrors: FieldErrors = $state({});
	conflict: StoredSide | null = $state(null);
	/** What the server holds, as far as we know. */
	#stored: EntryFormValues = $state.raw({} as EntryFormValues);
	#timer: ReturnType<typeof setTimeout> | undefined;
	#inflight: Promise<void> | undefined;
	#onCreated: DraftOptions['onCreated'];
	readonly #org: string;

	constructor(options: DraftOptions) {
		this.#org = options.org;
		this.id = options.id;
		this.version = options.version;
		this.status = options.status;
		this.values = { ...options.values };
		this.#stored = options.id ? { ...options.values } : ({} as EntryFormValues);
		this.#onCreated = options.onCreated;
	}

	/** Drafts save themselves; anything else waits for an explicit save. */
	get autosaves(): boolean {
		return this.status === 'draft';
	}

	get dirty(): boolean {
		return !this.id || !sameValues(this.values, this.#stored);
	}

	/** Call after every edit. */
	changed(): void {
		if (this.phase === 'conflict' || this.phase === 'locked') return;
		clearTimeout(this.#timer);
		if (!this.dirty) return;
		this.phase = 'pending';
		if (this.autosaves) this.#timer = setTimeout(() => void this.save(false), AUTOSAVE_DELAY_MS);
	}

	/** Saves now (Ctrl+S, the Save button, before submitting). Resolves whether all is stored. */
	async save(explicit = true): Promise<boolean> {
		clearTimeout(this.#timer);
		while (this.#inflight) await this.#inflight;
		if (this.phase === 'conflict' || this.phase === 'locked') return false;
		if (!this.dirty) {
			if (explicit && this.phase !== 'saved') this.phase = 'saved';
			return true;
		}
		const sent = $state.snapshot(this.values) as EntryFormValues;
		this.phase = 'saving';
		this.#inflight = this.#send(sent, explicit).finally(() => (this.#inflight = undefined));
		await this.#inflight;
		// Narrowed to 'saving' above, but #send has changed it since.
		const stored = (this.phase as SavePhase) === 'saved';
		// Typing went on while the request was out: save that too, after the next pause.
		if (stored && this.dirty) this.changed();
		return stored && !this.dirty;
	}

	/** Resolves a conflict by saving these values as a new version over the stored one. */
	async keepMine(): Promise<boolean> {
		if (!this.conflict) return false;
		this.version = this.conflict.version;
		this.conflict = null;
		this.phase = 'pending';
		return this.save(true);
	}

	/** Resolves a conflict by dropping these changes and editing the stored version. */
	takeTheirs(): void {
		if (!this.conflict) return;
		this.values = { ...this.conflict.values };
		this.#stored = { ...this.conflict.values };
		this.version = this.conflict.version;
		this.conflict = null;
		this.fieldErrors = {};
		this.phase = 'idle';
		this.message = `Now editing version ${this.version}.`;
	}

	async #send(sent: EntryFormValues, explicit: boolean): Promise<void> {
		const base = `/api/v1/orgs/${this.#org}/entries`;
		const creating = !this.id;
		let res: Response;
		try {
			res = await fetch(creating ? base : `${base}/${this.id}`, {
				method: creating ? 'POST' : 'PATCH',
				headers: { 'content-type': 'application/json', accept: 'application/json' },
				body: JSON.stringify(creating ? sent : { ...sent, version: this.version })
			});
		} catch {
			this.#fail('error', 'Not saved: the server cannot be reached. Your text is still here; saving again shortly.');
			if (this.autosaves) this.#timer = setTimeout(() => void this.save(false), RETRY_DELAY_MS);
			return;
		}
		const body = (await res.json().catch(() => ({}))) as {
			entry?: ApiEntry;
			current?: ApiEntry;
			error?: { code?: string; message?: string; issues?: { path: string; message: string }[] };
		};
		if (res.ok && body.entry) {
			this.id = body.entry.id;
			this.version = body.entry.version;
			this.status = body.entry.status;
			this.#stored = sent;
			this.fieldErrors = {};
			this.savedAt = new Date();
			this.phase = 'saved';
			this.message = '';
			if (creating) this.#onCreated?.(body.entry.id);
			return;
		}
		if (res.status === 409 && body.current) {
			this.conflict = { version: body.current.version, values: formValuesOf(body.current as never), updatedAt: String(body.current.updatedAt) };
			this.#fail('conflict', `Someone saved version ${body.current.version} while you were editing. Nothing was saved: choose which version to keep.`);
			return;
		}
		if (res.status === 400 && body.error?.issues) {
			const errors = fieldErrorsOf(body.error.issues);
			// While typing, a list of what is missing is enough; an explicit save marks each field.
			if (explicit) this.fieldErrors = errors;
			const names = Object.keys(errors).map((k) => FIELD_LABELS[k as keyof typeof FIELD_LABELS]);
			this.#fail('invalid', `Not saved yet: check ${names.join(', ') || 'the fields'}.`);
			return;
		}
		if (res.status === 401) return this.#fail('error', 'Not saved: you were signed out. Sign in again in another tab, then save (Ctrl+S).');
		if (res.status === 403) return this.#fail('locked', 'Not saved: you can no longer change this entry (it may have been submitted). Copy your text before leaving.');
		if (res.status === 404) return this.#fail('locked', 'Not saved: this entry no longer exists. Copy your text before leaving.');
		this.#fail('error', body.error?.message ? `Not saved: ${body.error.message}` : 'Not saved: something went wrong. Try again (Ctrl+S).');
	}

	#fail(phase: SavePhase, message: string): void {
		this.phase = phase;
		this.message = message;
	}

	/** Stops pending saves (the editor is going away). */
	dispose(): void {
		clearTimeout(this.#timer);
	}
}
