/**
 * What a photo file really is, from its bytes alone: the name and the declared type are never
 * trusted. Pure (no I/O, no Node APIs), so the browser pre-checks a chosen file with the same
 * code the server uses to refuse it.
 *
 * Each format's structure is walked to its end marker, so a truncated file is caught as well as a
 * file that only starts like an image:
 * - PNG (ISO/IEC 15948): the 8-byte signature, then chunks (length, type, data, CRC-32); IHDR
 *   first, with a valid CRC, bit depth and colour type; at least one IDAT; IEND last.
 * - JPEG (ITU-T T.81): SOI, marker segments up to a start-of-frame (SOFn) that gives the size,
 *   entropy-coded scans (skipping stuffed FF 00 and restart markers), and EOI.
 * - WebP (RIFF container): "RIFF", a size that the file must fill, "WEBP", then VP8 (lossy
 *   frame header with its start code), VP8L (lossless header with its signature byte) or VP8X
 *   (extended: canvas size) chunks, each inside the RIFF size.
 */

export const PHOTO_TYPES = ['image/jpeg', 'image/png', 'image/webp'] as const;
export type PhotoType = (typeof PHOTO_TYPES)[number];

export const PHOTO_EXTENSIONS: Readonly<Record<PhotoType, string>> = {
	'image/jpeg': 'jpg',
	'image/png': 'png',
	'image/webp': 'webp'
};

/** Largest photo accepted, in bytes (8 MB: a phone photo of a board, not a scan of a poster). */
export const MAX_PHOTO_BYTES = 8 * 1024 * 1024;
/** Largest side in pixels, and largest pixel count: browsers must be able to decode what we serve. */
export const MAX_PHOTO_SIDE = 16_384;
export const MAX_PHOTO_PIXELS = 80_000_000;

export type ImageRefusal = 'empty' | 'too_large' | 'not_image' | 'unsupported_type' | 'truncated' | 'corrupt' | 'too_many_pixels';

export type ImageCheck = { ok: true; type: PhotoType; width: number; height: number } | { ok: false; reason: ImageRefusal; message: string };

export const IMAGE_REFUSAL_MESSAGES: Readonly<Record<ImageRefusal, string>> = {
	empty: 'The file is empty. Choose the photo again.',
	too_large: `The photo is larger than ${MAX_PHOTO_BYTES / 1024 / 1024} MB. Export it smaller (2000 px on the long side is plenty) and try again.`,
	not_image: 'This file is not a photo. Choose a JPEG, PNG or WebP image.',
	unsupported_type: 'This image type is not accepted. Save it as JPEG, PNG or WebP and try again.',
	truncated: 'The image file is cut short (an interrupted copy or download?). Choose the complete file.',
	corrupt: 'The image file is damaged: its header does not read as a valid image. Save it again and retry.',
	too_many_pixels: `The image is too large in pixels (at most ${MAX_PHOTO_SIDE} px a side). Scale it down and try again.`
};

function refuse(reason: ImageRefusal): ImageCheck {
	return { ok: false, reason, message: IMAGE_REFUSAL_MESSAGES[reason] };
}

/** Signatures of image types we recognise but do not accept, to say "wrong type" rather than "not an image". */
const OTHER_IMAGES: readonly number[][] = [
	[0x47, 0x49, 0x46, 0x38], // GIF8
	[0x42, 0x4d], // BMP
	[0x49, 0x49, 0x2a, 0x00], // TIFF, little-endian
	[0x4d, 0x4d, 0x00, 0x2a], // TIFF, big-endian
	[0x00, 0x00, 0x01, 0x00] // ICO
];

function startsWith(b: Uint8Array, sig: readonly number[], at = 0): boolean {
	if (b.length < at + sig.length) return false;
	for (let k = 0; k < sig.length; k++) if (b[at + k] !== sig[k]) return false;
	return true;
}

function ascii(b: Uint8Array, at: number, len: number): string {
	let s = '';
	for (let k = 0; k < len && at + k < b.length; k++) s += String.fromCharCode(b[at + k]);
	return s;
}

const be32 = (b: Uint8Array, at: number) => ((b[at] << 24) | (b[at + 1] << 16) | (b[at + 2] << 8) | b[at + 3]) >>> 0;
const be16 = (b: Uint8Array, at: number) => (b[at] << 8) | b[at + 1];
const le32 = (b: Uint8Array, at: number) => (b[at] | (b[at + 1] << 8) | (b[at + 2] << 16) | (b[at + 3] << 24)) >>> 0;
const le24 = (b: Uint8Array, at: number) => b[at] | (b[at + 1] << 8) | (b[at + 2] << 16);

const PNG_SIGNATURE = [0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a];

/** Which format the first bytes announce (enough bytes: 16), without checking the rest. */
export function sniffImageType(head: Uint8Array): PhotoType | 'other-image' | undefined {
	if (startsWith(head, PNG_SIGNATURE)) return 'image/png';
	if (startsWith(head, [0xff, 0xd8, 0xff])) return 'image/jpeg';
	if (ascii(head, 0, 4) === 'RIFF' && ascii(head, 8, 4) === 'WEBP') return 'image/webp';
	if (OTHER_IMAGES.some((sig) => startsWith(head, sig))) return 'other-image';
	// SVG and HTML are text: refused as "not a photo" (an SVG can carry script).
	return undefined;
}

/**
 * Checks a whole file. `ok` carries the real type and pixel size; otherwise the reason and a
 * message for the person uploading. Files over MAX_PHOTO_BYTES are refused before any parsing.
 */
export function checkImage(bytes: Uint8Array): ImageCheck {
	if (bytes.length === 0) return refuse('empty');
	if (bytes.length > MAX_PHOTO_BYTES) return refuse('too_large');
	const type = sniffImageType(bytes);
	if (type === undefined) return refuse('not_image');
	if (type === 'other-image') return refuse('unsupported_type');
	const size = type === 'image/png' ? readPng(bytes) : type === 'image/jpeg' ? readJpeg(bytes) : readWebp(bytes);
	if (typeof size === 'string') return refuse(size);
	const { width, height } = size;
	if (width < 1 || height < 1) return refuse('corrupt');
	if (width > MAX_PHOTO_SIDE || height > MAX_PHOTO_SIDE || width * height > MAX_PHOTO_PIXELS) return refuse('too_many_pixels');
	return { ok: true, type, width, height };
}

type Size = { width: number; height: number } | 'truncated' | 'corrupt';

// CRC-32 (ISO 3309, as PNG uses it), table-driven.
const CRC_TABLE = (() => {
	const t = new Uint32Array(256);
	for (let n = 0; n < 256; n++) {
		let c = n;
		for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
		t[n] = c >>> 0;
	}
	return t;
})();

export function crc32(b: Uint8Array, start = 0, end = b.length): number {
	let c = 0xffffffff;
	for (let k = start; k < end; k++) c = CRC_TABLE[(c ^ b[k]) & 0xff] ^ (c >>> 8);
	return (c ^ 0xffffffff) >>> 0;
}

/** Allowed bit depths per PNG colour type (ISO/IEC 15948, table 11.1). */
const PNG_DEPTHS: Readonly<Record<number, readonly number[]>> = { 0: [1, 2, 4, 8, 16], 2: [8, 16], 3: [1, 2, 4, 8], 4: [8, 16], 6: [8, 16] };

function readPng(b: Uint8Array): Size {
	let at = 8;
	let size: { width: number; height: number } | undefined;
	let sawData = false;
	for (;;) {
		if (at + 8 > b.length) return 'truncated';
		const length = be32(b, at);
		const type = ascii(b, at + 4, 4);
		if (length > 0x7fffffff || !/^[A-Za-z]{4}$/.test(type)) return 'corrupt';
		const end = at + 12 + length;
		if (end > b.length) return 'truncated';
		if (crc32(b, at + 4, at + 8 + length) !== be32(b, at + 8 + length)) return 'corrupt';
		if (!size) {
			if (type !== 'IHDR' || length !== 13) return 'corrupt';
			const width = be32(b, at + 8);
			const height = be32(b, at + 12);
			const depth = b[at + 16];
			const colour = b[at + 17];
			if (!PNG_DEPTHS[colour]?.includes(depth) || b[at + 18] !== 0 || b[at + 19] !== 0 || b[at + 20] > 1) return 'corrupt';
			size = { width, height };
		} else if (type === 'IDAT') {
			sawData = true;
		} else if (type === 'IEND') {
			return sawData ? size : 'corrupt';
		}
		at = end;
	}
}

function readJpeg(b: Uint8Array): Size {
	let at = 2;
	let size: { width: number; height: number } | undefined;
	for (;;) {
		// Markers may be preceded by fill bytes (FF FF …).
		while (at < b.length && b[at] === 0xff && b[at + 1] === 0xff) at++;
		if (at + 2 > b.length) return 'truncated';
		if (b[at] !== 0xff) return 'corrupt';
		const marker = b[at + 1];
		at += 2;
		if (marker === 0xd9) return size ?? 'corrupt'; // EOI
		if (marker === 0x01 || (marker >= 0xd0 && marker <= 0xd7)) continue; // TEM, RSTn: no length
		if (at + 2 > b.length) return 'truncated';
		const length = be16(b, at);
		if (length < 2) return 'corrupt';
		if (at + length > b.length) return 'truncated';
		const isFrame = marker >= 0xc0 && marker <= 0xcf && marker !== 0xc4 && marker !== 0xc8 && marker !== 0xcc;
		if (isFrame) {
			if (length < 8) return 'corrupt';
			// Arithmetic-coded and lossless frames are valid JPEG but browsers do not show them.
			if (marker !== 0xc0 && marker !== 0xc1 && marker !== 0xc2) return 'corrupt';
			size = { height: be16(b, at + 3), width: be16(b, at + 5) };
		}
		at += length;
		if (marker === 0xda) {
			if (!size) return 'corrupt';
			// Entropy-coded data runs to the next marker that is not a stuffed zero or a restart.
			for (;;) {
				if (at + 1 >= b.length) return 'truncated';
				if (b[at] === 0xff && b[at + 1] !== 0x00 && !(b[at + 1] >= 0xd0 && b[at + 1] <= 0xd7) && b[at + 1] !== 0xff) break;
				at++;
			}
		}
	}
}

function readWebp(b: Uint8Array): Size {
	if (b.length < 20) return 'truncated';
	const riffEnd = 8 + le32(b, 4);
	if (riffEnd > b.length) return 'truncated';
	let at = 12;
	let canvas: { width: number; height: number } | undefined;
	let frame: { width: number; height: number } | undefined;
	while (at + 8 <= riffEnd) {
		const type = ascii(b, at, 4);
		const length = le32(b, at + 4);
		const data = at + 8;
		if (data + length > riffEnd) return 'truncated';
		if (type === 'VP8X') {
			if (length < 10) return 'corrupt';
			canvas = { width: le24(b, data + 4) + 1, height: le24(b, data + 7) + 1 };
		} else if (type === 'VP8 ' && !frame) {
			// Frame tag (3 bytes, bit 0 = 0 for a key frame), start code 9D 01 2A, 14-bit sizes.
			if (length < 10 || (b[data] & 1) !== 0 || !startsWith(b, [0x9d, 0x01, 0x2a], data + 3)) return 'corrupt';
			frame = { width: (b[data + 6] | (b[data + 7] << 8)) & 0x3fff, height: (b[data + 8] | (b[data + 9] << 8)) & 0x3fff };
		} else if (type === 'VP8L' && !frame) {
			// Signature 0x2F, then width − 1 and height − 1 in 14 bits each, least significant first.
			if (length < 5 || b[data] !== 0x2f) return 'corrupt';
			const bits = le32(b, data + 1);
			frame = { width: (bits & 0x3fff) + 1, height: ((bits >>> 14) & 0x3fff) + 1 };
		}
		at = data + length + (length & 1); // chunks are padded to an even length
	}
	if (at < riffEnd) return 'truncated';
	// An extended file names the canvas; its frames (or animation) fill it.
	const size = canvas ?? frame;
	if (!size || (!frame && !canvas)) return 'corrupt';
	if (!frame && canvas && !hasChunk(b, riffEnd, 'ANIM')) return 'corrupt';
	return size;
}

function hasChunk(b: Uint8Array, riffEnd: number, name: string): boolean {
	let at = 12;
	while (at + 8 <= riffEnd) {
		if (ascii(b, at, 4) === name) return true;
		const length = le32(b, at + 4);
		at += 8 + length + (length & 1);
	}
	return false;
}

/** The file name to keep: the person's name, with the extension of what the file really is. */
export function photoFileName(name: string, type: PhotoType): string {
	const base = name
		.replace(/[\\/]+/g, '_')
		// eslint-disable-next-line no-control-regex
		.replace(/[\u0000-\u001f\u007f]+/g, '')
		.trim()
		.replace(/\.[A-Za-z0-9]{1,5}$/, '')
		.slice(0, 120);
	return `${base || 'photo'}.${PHOTO_EXTENSIONS[type]}`;
}
