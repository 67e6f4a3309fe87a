/**
 * The server's DOMPurify, on a jsdom window that is replaced every few hundred sanitisations.
 *
 * Why not isomorphic-dompurify's shared instance as it is: on the server it sanitises inside one
 * jsdom window for the life of the process, and that window keeps state from every call, so each
 * call gets slower and the heap grows (measured here: with the shared window, per-call time rose
 * about fourfold over 2 400 calls and the heap grew ≈ 7 kB a call after GC; with a fresh window every
 * 200 calls both stayed flat). Newer releases of the wrapper add a way to reset the window, but they
 * need a newer Node than ours, so we do the same here: the wrapper's export is DOMPurify's factory,
 * called on a window we own, and the window comes from the very jsdom the wrapper was installed
 * with.
 */
import DOMPurify from 'isomorphic-dompurify';
import { createRequire } from 'node:module';

interface JsdomWindow {
	close(): void;
}
interface JsdomModule {
	JSDOM: new (html: string) => { window: JsdomWindow };
}

/** Sanitisations per window before it is replaced. */
const CALLS_PER_WINDOW = 200;

// Resolve jsdom from the wrapper's own location: exactly the copy it depends on.
const fromWrapper = createRequire(createRequire(import.meta.url).resolve('isomorphic-dompurify'));
const { JSDOM } = fromWrapper('jsdom') as JsdomModule;
const createPurifier = DOMPurify as unknown as (window: JsdomWindow) => typeof DOMPurify;

let window: JsdomWindow | undefined;
let purifier: typeof DOMPurify | undefined;
let calls = 0;

/** A DOMPurify bound to a live window; valid until the next call of this function. */
export function currentPurifier(): typeof DOMPurify {
	if (!purifier || calls >= CALLS_PER_WINDOW) {
		window?.close();
		window = new JSDOM('<!DOCTYPE html>').window;
		purifier = createPurifier(window);
		calls = 0;
	}
	calls += 1;
	return purifier;
}

/** The DOMPurify release in use, for cache keys. */
export const purifierVersion: string = DOMPurify.version;
