/**
 * Cost of rendering an entry body: uncached render + sanitise, a cache hit, the one-line field and
 * the search-text stripper. Decides whether the render cache is worth having (it is when a miss
 * costs much more than hashing the source).
 *
 * The body is invented: a typical entry with a table of readings, a code block, a list and a photo.
 */
import {
	clearMarkdownCache,
	renderInline,
	renderMarkdown,
	renderMarkdownUncached,
	stripMarkdown
} from '../../src/lib/server/markdown/index';

export const name = 'markdown';

const PREFIX = '/o/fernhollow/attachments/';
const BODY = `# Drive board rev C: no output on phase W

Measured at **10 V · 1 kΩ · 60 Hz**, board unpowered and C12 discharged.

| Test point | Known-good | Fault |
|:--|--:|--:|
| U12 pin 7 ↔ GND | knee ≈ 0.65 V | 4.7 Ω |
| Q3 gate ↔ source | 10 kΩ | open |
| C31 (+) ↔ GND | 470 µF | short |

1. Lift U12 pin 7 and probe again.
2. If the short stays, suspect the *gate driver*.
3. Replace and re-check against the known-good curve.

\`\`\`csv
v,i
-0.70,-0.0001
0.65,0.0025
\`\`\`

> Seen on three boards from the same batch; see [the earlier entry](../entries/31) and the
> [datasheet](https://parts.example/gd.pdf).

![U12 after removal](${PREFIX}u12.jpg)
`.repeat(3);

function time(label: string, n: number, fn: (k: number) => void): number {
	fn(-1);
	const start = performance.now();
	for (let k = 0; k < n; k++) fn(k);
	const perCall = (performance.now() - start) / n;
	console.log(`${label.padEnd(34)} ${perCall.toFixed(3).padStart(9)} ms/call  (n=${n})`);
	return perCall;
}

export async function run(): Promise<void> {
	console.log(`body: ${BODY.length} characters`);
	// A distinct source per call defeats the cache without changing the work.
	const miss = time('render, uncached', 200, (k) => renderMarkdownUncached(`${BODY}\n${k}`, { attachmentPrefix: PREFIX }));
	clearMarkdownCache();
	renderMarkdown(BODY, { attachmentPrefix: PREFIX });
	const hit = time('render, cache hit', 2000, () => renderMarkdown(BODY, { attachmentPrefix: PREFIX }));
	time('renderInline, uncached (distinct)', 200, (k) => renderInline(`No output on *phase W*, \`U12 pin 7\` ${k}`));
	time('stripMarkdown, uncached (distinct)', 200, (k) => stripMarkdown(`${BODY}\n${k}`));
	console.log(`cache hit is ${(miss / hit).toFixed(0)}× cheaper than a miss`);
}
