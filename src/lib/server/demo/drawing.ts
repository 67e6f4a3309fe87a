import { deflateSync } from 'node:zlib';
import { crc32 } from '../../photos/image-check';

/**
 * A small RGB raster and a PNG writer (node's zlib and the chunk layout of ISO/IEC 15948), for
 * the demo seed's drawn photos. No dependency: the pictures are flat diagrams, not photographs.
 */
export type Rgb = readonly [number, number, number];

export class Raster {
	readonly data: Uint8Array;
	constructor(
		readonly width: number,
		readonly height: number,
		background: Rgb
	) {
		this.data = new Uint8Array(width * height * 3);
		for (let k = 0; k < width * height; k++) this.data.set(background, k * 3);
	}

	dot(x: number, y: number, c: Rgb): void {
		const xi = Math.round(x);
		const yi = Math.round(y);
		if (xi < 0 || yi < 0 || xi >= this.width || yi >= this.height) return;
		this.data.set(c, (yi * this.width + xi) * 3);
	}

	rect(x: number, y: number, w: number, h: number, c: Rgb): void {
		for (let j = Math.max(0, Math.round(y)); j < Math.min(this.height, Math.round(y + h)); j++) {
			for (let i = Math.max(0, Math.round(x)); i < Math.min(this.width, Math.round(x + w)); i++) this.data.set(c, (j * this.width + i) * 3);
		}
	}

	frame(x: number, y: number, w: number, h: number, c: Rgb, t = 1): void {
		this.rect(x, y, w, t, c);
		this.rect(x, y + h - t, w, t, c);
		this.rect(x, y, t, h, c);
		this.rect(x + w - t, y, t, h, c);
	}

	/** A line `t` pixels thick; `dash` > 0 draws dashes of that length. */
	line(x0: number, y0: number, x1: number, y1: number, c: Rgb, t = 1, dash = 0): void {
		const steps = Math.max(1, Math.ceil(Math.hypot(x1 - x0, y1 - y0)));
		const r = (t - 1) / 2;
		for (let s = 0; s <= steps; s++) {
			if (dash > 0 && Math.floor(s / dash) % 2 === 1) continue;
			const x = x0 + ((x1 - x0) * s) / steps;
			const y = y0 + ((y1 - y0) * s) / steps;
			if (r <= 0) this.dot(x, y, c);
			else this.disc(x, y, r, c);
		}
	}

	disc(cx: number, cy: number, r: number, c: Rgb): void {
		for (let j = Math.floor(cy - r); j <= Math.ceil(cy + r); j++) {
			for (let i = Math.floor(cx - r); i <= Math.ceil(cx + r); i++) if ((i - cx) ** 2 + (j - cy) ** 2 <= r * r + 0.25) this.dot(i, j, c);
		}
	}

	ring(cx: number, cy: number, r: number, c: Rgb, t = 2): void {
		for (let j = Math.floor(cy - r - t); j <= Math.ceil(cy + r + t); j++) {
			for (let i = Math.floor(cx - r - t); i <= Math.ceil(cx + r + t); i++) {
				const d = Math.hypot(i - cx, j - cy);
				if (d >= r - t / 2 && d <= r + t / 2) this.dot(i, j, c);
			}
		}
	}

	/** A polyline through the points, closed when `closed`. */
	path(points: readonly (readonly [number, number])[], c: Rgb, t = 1, closed = false): void {
		for (let k = 1; k < points.length; k++) this.line(points[k - 1][0], points[k - 1][1], points[k][0], points[k][1], c, t);
		if (closed && points.length > 2) this.line(points.at(-1)![0], points.at(-1)![1], points[0][0], points[0][1], c, t);
	}
}

function chunk(type: string, data: Uint8Array): Uint8Array {
	const out = new Uint8Array(12 + data.length);
	const view = new DataView(out.buffer);
	view.setUint32(0, data.length);
	for (let k = 0; k < 4; k++) out[4 + k] = type.charCodeAt(k);
	out.set(data, 8);
	view.setUint32(8 + data.length, crc32(out, 4, 8 + data.length));
	return out;
}

/** The raster as a PNG file: 8-bit RGB, no interlace, filter type 0 on every row. */
export function encodePng(r: Raster): Uint8Array {
	const ihdr = new Uint8Array(13);
	const view = new DataView(ihdr.buffer);
	view.setUint32(0, r.width);
	view.setUint32(4, r.height);
	ihdr.set([8, 2, 0, 0, 0], 8);
	const stride = r.width * 3;
	const raw = new Uint8Array((stride + 1) * r.height);
	for (let y = 0; y < r.height; y++) raw.set(r.data.subarray(y * stride, (y + 1) * stride), y * (stride + 1) + 1);
	const parts = [
		new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]),
		chunk('IHDR', ihdr),
		chunk('IDAT', deflateSync(raw, { level: 9 })),
		chunk('IEND', new Uint8Array(0))
	];
	const out = new Uint8Array(parts.reduce((n, p) => n + p.length, 0));
	let at = 0;
	for (const p of parts) {
		out.set(p, at);
		at += p.length;
	}
	return out;
}
