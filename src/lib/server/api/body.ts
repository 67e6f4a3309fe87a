import { error } from '@sveltejs/kit';

/**
 * Reads a request body, refusing it as soon as it passes `maxBytes` — while it streams in, not
 * after — so an oversized upload costs neither memory nor a database write.
 */
export async function readBodyLimited(request: Request, maxBytes: number): Promise<Uint8Array<ArrayBuffer>> {
	return (await readBodyWithin(request, maxBytes)) ?? tooLarge(maxBytes);
}

/**
 * The body, or undefined as soon as it passes `maxBytes` (the rest is not read), for callers that
 * answer an oversized upload themselves (form actions, which must not throw an error page).
 */
export async function readBodyWithin(request: Request, maxBytes: number): Promise<Uint8Array<ArrayBuffer> | undefined> {
	const declared = Number(request.headers.get('content-length') ?? NaN);
	if (declared > maxBytes) return undefined;
	const reader = request.body?.getReader();
	if (!reader) return new Uint8Array(0);
	const chunks: Uint8Array[] = [];
	let total = 0;
	for (;;) {
		const { done, value } = await reader.read();
		if (done) break;
		total += value.byteLength;
		if (total > maxBytes) {
			await reader.cancel();
			return undefined;
		}
		chunks.push(value);
	}
	const out = new Uint8Array(total);
	let at = 0;
	for (const c of chunks) {
		out.set(c, at);
		at += c.byteLength;
	}
	return out;
}

function tooLarge(maxBytes: number): never {
	const message = `The upload is larger than ${Math.round(maxBytes / 1024 / 1024)} MB. Export fewer periods or a lower sample rate.`;
	error(413, { message, error: { code: 'too_large', message } });
}

/** The multipart form of a body already read (within its limit). */
export async function formDataOf(request: Request, body: Uint8Array<ArrayBuffer>): Promise<FormData> {
	return new Response(body, { headers: { 'content-type': request.headers.get('content-type') ?? '' } }).formData();
}
