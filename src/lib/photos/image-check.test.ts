import { readFileSync } from 'node:fs';
import { deflateSync } from 'node:zlib';
import { describe, expect, it } from 'vitest';
import { checkImage, crc32, MAX_PHOTO_BYTES, photoFileName, sniffImageType } from './image-check';

// Fixtures drawn on a 64 × 48 canvas and encoded by Chromium's own PNG, JPEG and WebP encoders
// (outside this project), so the checker is tested on files real software writes.
const fixture = (name: string) => new Uint8Array(readFileSync(`tests/fixtures/photos/${name}`));
const PNG = fixture('board-64x48.png');
const JPEG = fixture('board-64x48.jpg');
const WEBP = fixture('board-64x48.webp');

/** A PNG built with node's zlib and the chunk layout of ISO/IEC 15948, for edge cases. */
function png(width: number, height: number, opts: { skipIend?: boolean } = {}): Uint8Array {
	const chunk = (type: string, data: Uint8Array) => {
		const out = new Uint8Array(12 + data.length);
		const view = new DataView(out.buffer);
		view.setUint32(0, data.length);
		out.set(new TextEncoder().encode(type), 4);
		out.set(data, 8);
		view.setUint32(8 + data.length, crc32(out, 4, 8 + data.length));
		return out;
	};
	const ihdr = new Uint8Array(13);
	new DataView(ihdr.buffer).setUint32(0, width);
	new DataView(ihdr.buffer).setUint32(4, height);
	ihdr.set([8, 0, 0, 0, 0], 8); // 8-bit greyscale
	const raw = new Uint8Array(Math.min(height, 4) * (width + 1));
	const parts = [new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]), chunk('IHDR', ihdr), chunk('IDAT', deflateSync(raw))];
	if (!opts.skipIend) parts.push(chunk('IEND', new Uint8Array(0)));
	return Buffer.concat(parts);
}

describe('checkImage', () => {
	it.each([
		['PNG', PNG, 'image/png'],
		['JPEG', JPEG, 'image/jpeg'],
		['WebP', WEBP, 'image/webp']
	])('reads the type and the 64 × 48 size of a %s written by a browser', (_, bytes, type) => {
		expect(checkImage(bytes)).toEqual({ ok: true, type, width: 64, height: 48 });
	});

	it('reads the size from the PNG header, not from anything else', () => {
		expect(checkImage(png(300, 7))).toMatchObject({ ok: true, width: 300, height: 7 });
	});

	it.each([
		['PNG', PNG],
		['JPEG', JPEG],
		['WebP', WEBP]
	])('refuses a %s cut short, at every length from the header to one byte before the end', (_, bytes) => {
		// Every cut must be refused; which reason depends on where it falls (a cut through the
		// header reads as not-an-image or damaged, a cut after it as truncated).
		for (let n = 1; n < bytes.length; n += 1) {
			const r = checkImage(bytes.subarray(0, n));
			expect(r.ok, `cut at ${n} of ${bytes.length}`).toBe(false);
		}
		expect(checkImage(bytes.subarray(0, bytes.length - 1))).toMatchObject({ ok: false, reason: 'truncated' });
		expect(checkImage(bytes.subarray(0, Math.floor(bytes.length / 2)))).toMatchObject({ ok: false, reason: 'truncated' });
	});

	it('refuses a PNG without its end chunk as truncated', () => {
		expect(checkImage(png(8, 8, { skipIend: true }))).toMatchObject({ ok: false, reason: 'truncated' });
	});

	it('refuses a PNG whose header was altered (its CRC no longer matches)', () => {
		const bad = PNG.slice();
		bad[19] ^= 0x01; // a bit of the height
		expect(checkImage(bad)).toMatchObject({ ok: false, reason: 'corrupt' });
	});

	it('refuses text, an SVG and an HTML page as not images', () => {
		const enc = (s: string) => new TextEncoder().encode(s);
		expect(checkImage(enc('R27 measured open.\n'))).toMatchObject({ ok: false, reason: 'not_image' });
		expect(checkImage(enc('<svg xmlns="http://www.w3.org/2000/svg"><script>alert(1)</script></svg>'))).toMatchObject({ ok: false, reason: 'not_image' });
		expect(checkImage(enc('<!doctype html><p>hi'))).toMatchObject({ ok: false, reason: 'not_image' });
	});

	it('says "wrong type" for a GIF or a BMP rather than "not an image"', () => {
		expect(checkImage(new TextEncoder().encode('GIF89a\x01\x00\x01\x00'))).toMatchObject({ ok: false, reason: 'unsupported_type' });
		expect(checkImage(new Uint8Array([0x42, 0x4d, 0x3a, 0, 0, 0]))).toMatchObject({ ok: false, reason: 'unsupported_type' });
	});

	it('refuses an empty file and one over the size limit', () => {
		expect(checkImage(new Uint8Array(0))).toMatchObject({ ok: false, reason: 'empty' });
		const big = new Uint8Array(MAX_PHOTO_BYTES + 1);
		big.set(PNG);
		expect(checkImage(big)).toMatchObject({ ok: false, reason: 'too_large' });
	});

	it('refuses a header that claims more pixels than a browser would decode', () => {
		expect(checkImage(png(20_000, 10))).toMatchObject({ ok: false, reason: 'too_many_pixels' });
		expect(checkImage(png(10_000, 10_000))).toMatchObject({ ok: false, reason: 'too_many_pixels' });
	});

	it('reads a lossless WebP header (VP8L: 14-bit sizes minus one, least significant bit first)', () => {
		// RIFF container with one VP8L chunk: signature 0x2F, then (w−1) | (h−1) << 14.
		const w = 1000;
		const h = 750;
		const bits = (w - 1) | ((h - 1) << 14);
		const payload = [0x2f, bits & 0xff, (bits >> 8) & 0xff, (bits >> 16) & 0xff, (bits >>> 24) & 0xff, 0, 0, 0];
		const chunk = [...new TextEncoder().encode('VP8L'), payload.length, 0, 0, 0, ...payload];
		const body = [...new TextEncoder().encode('WEBP'), ...chunk];
		const size = body.length;
		const file = new Uint8Array([...new TextEncoder().encode('RIFF'), size & 0xff, (size >> 8) & 0xff, 0, 0, ...body]);
		expect(checkImage(file)).toEqual({ ok: true, type: 'image/webp', width: 1000, height: 750 });
	});
});

describe('sniffImageType', () => {
	it('goes by the bytes, whatever the name says', () => {
		expect(sniffImageType(PNG.subarray(0, 16))).toBe('image/png');
		expect(sniffImageType(JPEG.subarray(0, 16))).toBe('image/jpeg');
		expect(sniffImageType(WEBP.subarray(0, 16))).toBe('image/webp');
	});
});

describe('photoFileName', () => {
	it('keeps the name and gives it the extension of what the file is', () => {
		expect(photoFileName('board.txt', 'image/png')).toBe('board.png');
		expect(photoFileName('C12 top side.JPG', 'image/jpeg')).toBe('C12 top side.jpg');
		expect(photoFileName('../../etc/passwd', 'image/webp')).toBe('.._.._etc_passwd.webp');
		expect(photoFileName('', 'image/png')).toBe('photo.png');
	});
});
