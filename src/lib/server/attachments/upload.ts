import { checkImage, IMAGE_REFUSAL_MESSAGES, type ImageRefusal, MAX_PHOTO_BYTES, photoFileName, type PhotoType } from '../../photos/image-check';
import { formDataOf, readBodyWithin } from '../api/body';

/** Room for the multipart framing and the few fields around the largest photo. */
const MAX_PHOTO_REQUEST_BYTES = MAX_PHOTO_BYTES + 64 * 1024;

export type PhotoUpload =
	| { ok: true; fileName: string; type: PhotoType; width: number; height: number; bytes: Uint8Array }
	| { ok: false; status: 400 | 413 | 415 | 422; code: 'invalid_input' | 'too_large' | 'invalid_photo'; reason: ImageRefusal | 'no_file'; message: string };

const REFUSAL_STATUS: Record<ImageRefusal, 400 | 413 | 415 | 422> = {
	empty: 400,
	too_large: 413,
	not_image: 415,
	unsupported_type: 415,
	truncated: 422,
	corrupt: 422,
	too_many_pixels: 422
};

/**
 * Reads a photo upload: multipart/form-data with the file in `photo` (or `file`), or the image
 * itself as the body (a script: `--data-binary @board.jpg`, name in `?name=`). The body is
 * refused while it streams in once it passes the limit. What the file is comes from its bytes
 * alone (`checkImage`); the name and the declared type are ignored. Nothing is stored here.
 */
export async function readPhotoUpload(request: Request, url: URL): Promise<PhotoUpload> {
	const type = request.headers.get('content-type') ?? '';
	const multipart = type.startsWith('multipart/form-data');
	const body = await readBodyWithin(request, multipart ? MAX_PHOTO_REQUEST_BYTES : MAX_PHOTO_BYTES);
	if (!body) return refused('too_large');
	let name: string;
	let bytes: Uint8Array;
	if (multipart) {
		let form: FormData;
		try {
			form = await formDataOf(request, body);
		} catch {
			return { ok: false, status: 400, code: 'invalid_input', reason: 'no_file', message: 'The upload could not be read. Choose the photo again.' };
		}
		const f = form.get('photo') ?? form.get('file');
		if (!(f instanceof File)) {
			return { ok: false, status: 400, code: 'invalid_input', reason: 'no_file', message: 'Choose a photo to upload.' };
		}
		name = f.name;
		bytes = new Uint8Array(await f.arrayBuffer());
	} else {
		name = url.searchParams.get('name') ?? 'photo';
		bytes = body;
	}
	return checkedUpload(name, bytes);
}

/** Checks bytes already in hand (the import's photos, the demo seed's drawings). */
export function checkedUpload(name: string, bytes: Uint8Array): PhotoUpload {
	const check = checkImage(bytes);
	if (!check.ok) return refused(check.reason, check.message);
	return { ok: true, fileName: photoFileName(name, check.type), type: check.type, width: check.width, height: check.height, bytes };
}

function refused(reason: ImageRefusal, message = IMAGE_REFUSAL_MESSAGES[reason]): PhotoUpload {
	const code = reason === 'too_large' ? 'too_large' : reason === 'empty' ? 'invalid_input' : 'invalid_photo';
	return { ok: false, status: REFUSAL_STATUS[reason], code, reason, message };
}
