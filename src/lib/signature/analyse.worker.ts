/**
 * The engine's parse → canonicalise → analyse in a worker thread, for captures large enough that
 * doing it on the page would freeze it (see `analyseOffThread`). Replies with the analysis without
 * the raw samples (the page shows the canonical curve), or with the engine's refusal.
 */
import { analyseCapture } from './index';
import { isSignatureError } from './errors';
import type { OffThreadReply, OffThreadRequest } from './off-thread';

self.onmessage = (event: MessageEvent<OffThreadRequest>) => {
	const { id, input, conditions, options } = event.data;
	let reply: OffThreadReply;
	try {
		const { capture, ...rest } = analyseCapture(input, conditions, options);
		const { samples: _samples, ...light } = capture;
		reply = { id, ok: true, result: { ...rest, capture: light } };
	} catch (e) {
		reply = isSignatureError(e)
			? { id, ok: false, error: { code: e.code, message: e.message, line: e.line } }
			: { id, ok: false, error: { code: null, message: e instanceof Error ? e.message : String(e) } };
	}
	self.postMessage(reply);
};
