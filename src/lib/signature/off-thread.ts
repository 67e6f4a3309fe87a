/**
 * Runs the engine on a capture in a worker thread, so a large file (a scope export near the 20 MB
 * limit) does not freeze the page while it is read. Small captures are faster analysed in place:
 * callers use `wantsOffThread` to choose. One worker serves the page; a newer request supersedes an
 * older one still running (the worker is stopped and started afresh, so stale work does not delay
 * the capture the technician is looking at now).
 */
import { SignatureError, type SignatureErrorCode } from './errors';
import type { CaptureAnalysis } from './index';
import type { ParseOptions, ParsedCapture, TestConditions } from './types';

/** Captures at least this large are analysed off the page's thread. */
export const OFF_THREAD_MIN_BYTES = 256 * 1024;

/** An analysis as the page uses it: everything but the raw samples. */
export type CapturePreviewAnalysis = Omit<CaptureAnalysis, 'capture'> & { capture: Omit<ParsedCapture, 'samples'> };

export interface OffThreadRequest {
	id: number;
	input: Uint8Array | string;
	conditions: TestConditions;
	options: ParseOptions;
}

export type OffThreadReply =
	| { id: number; ok: true; result: CapturePreviewAnalysis }
	| { id: number; ok: false; error: { code: SignatureErrorCode | null; message: string; line?: number } };

/** The rejection of a request that a newer one replaced. */
export class Superseded extends Error {
	constructor() {
		super('superseded by a newer capture');
		this.name = 'Superseded';
	}
}

export function wantsOffThread(input: Uint8Array | string): boolean {
	if (typeof Worker === 'undefined') return false;
	return (typeof input === 'string' ? input.length : input.byteLength) >= OFF_THREAD_MIN_BYTES;
}

let worker: Worker | null = null;
let nextId = 1;
let inFlight: { id: number; reject: (e: unknown) => void } | null = null;
const waiting = new Map<number, { resolve: (r: CapturePreviewAnalysis) => void; reject: (e: unknown) => void }>();

function start(): Worker {
	const w = new Worker(new URL('./analyse.worker.ts', import.meta.url), { type: 'module' });
	w.onmessage = (event: MessageEvent<OffThreadReply>) => {
		const reply = event.data;
		const pending = waiting.get(reply.id);
		waiting.delete(reply.id);
		if (inFlight?.id === reply.id) inFlight = null;
		if (!pending) return;
		if (reply.ok) pending.resolve(reply.result);
		else if (reply.error.code) {
			// The message carries its "Line N:" prefix, which the constructor adds back from `line`.
			const { code, message, line } = reply.error;
			pending.reject(new SignatureError(code, line === undefined ? message : message.replace(/^Line \d+: /, ''), line));
		} else pending.reject(new Error(reply.error.message));
	};
	w.onerror = (event) => {
		event.preventDefault();
		const message = event.message || 'The capture could not be analysed in the browser.';
		for (const p of waiting.values()) p.reject(new Error(message));
		waiting.clear();
		inFlight = null;
		w.terminate();
		if (worker === w) worker = null;
	};
	return w;
}

/** The engine's analysis of `input`, worked out in a worker thread. */
export function analyseOffThread(input: Uint8Array | string, conditions: TestConditions, options: ParseOptions = {}): Promise<CapturePreviewAnalysis> {
	if (inFlight && worker) {
		// Stop the stale work rather than queue behind it.
		worker.terminate();
		worker = null;
		waiting.delete(inFlight.id);
		inFlight.reject(new Superseded());
		inFlight = null;
	}
	worker ??= start();
	const id = nextId++;
	return new Promise((resolve, reject) => {
		waiting.set(id, { resolve, reject });
		inFlight = { id, reject };
		// A copy goes to the worker; the page keeps its own bytes for the upload.
		worker!.postMessage({ id, input, conditions, options: { ...options } } satisfies OffThreadRequest);
	});
}
