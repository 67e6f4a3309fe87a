import { checkImage, MAX_PHOTO_BYTES, IMAGE_REFUSAL_MESSAGES } from '../../photos/image-check';

/** A photo as the photo endpoints return it (see photoJson on the server). */
export interface PhotoItem {
	id: string;
	fileName: string;
	contentType: string;
	bytes: number;
	width: number | null;
	height: number | null;
	url: string;
	markdown: string;
	inBody?: boolean;
}

/**
 * The browser's pre-check: the same content check the server makes, so a wrong file is refused
 * before a byte is sent (the server checks again; it is the authority). Undefined when it passes.
 */
export async function precheckPhoto(file: File): Promise<string | undefined> {
	if (file.size === 0) return IMAGE_REFUSAL_MESSAGES.empty;
	if (file.size > MAX_PHOTO_BYTES) return IMAGE_REFUSAL_MESSAGES.too_large;
	const check = checkImage(new Uint8Array(await file.arrayBuffer()));
	return check.ok ? undefined : check.message;
}

/** Uploads one photo with progress (XMLHttpRequest: fetch cannot report upload progress). */
export function uploadPhoto(
	org: string,
	entryId: string,
	file: File,
	onprogress: (fraction: number) => void
): Promise<{ ok: true; photo: PhotoItem } | { ok: false; message: string }> {
	return new Promise((resolve) => {
		const xhr = new XMLHttpRequest();
		xhr.open('POST', `/api/v1/orgs/${org}/entries/${entryId}/photos`);
		xhr.responseType = 'json';
		xhr.upload.onprogress = (e) => e.lengthComputable && onprogress(e.loaded / e.total);
		xhr.onload = () => {
			const body = xhr.response as { photo?: PhotoItem; error?: { message?: string } } | null;
			if (xhr.status === 201 && body?.photo) resolve({ ok: true, photo: body.photo });
			else resolve({ ok: false, message: body?.error?.message ?? `The upload failed (HTTP ${xhr.status}). Try again.` });
		};
		xhr.onerror = () => resolve({ ok: false, message: 'The upload did not reach the server. Check the connection and try again.' });
		const form = new FormData();
		form.set('photo', file);
		xhr.send(form);
	});
}
