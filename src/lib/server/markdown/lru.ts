/**
 * A small least-recently-used map of strings, bounded both by entry count and by the total length
 * of the stored values, so a few huge entries cannot pin much memory.
 */
export class StringLru {
	#map = new Map<string, string>();
	#chars = 0;

	constructor(
		readonly maxEntries: number,
		readonly maxChars: number
	) {}

	get size(): number {
		return this.#map.size;
	}

	get(key: string): string | undefined {
		const value = this.#map.get(key);
		if (value === undefined) return undefined;
		// Map keeps insertion order: re-inserting moves the key to the most recent end.
		this.#map.delete(key);
		this.#map.set(key, value);
		return value;
	}

	set(key: string, value: string): void {
		if (value.length > this.maxChars) return;
		const old = this.#map.get(key);
		if (old !== undefined) {
			this.#map.delete(key);
			this.#chars -= old.length;
		}
		this.#map.set(key, value);
		this.#chars += value.length;
		while (this.#map.size > this.maxEntries || this.#chars > this.maxChars) {
			const oldest = this.#map.keys().next();
			if (oldest.done) break;
			this.#chars -= this.#map.get(oldest.value)!.length;
			this.#map.delete(oldest.value);
		}
	}

	clear(): void {
		this.#map.clear();
		this.#chars = 0;
	}
}
