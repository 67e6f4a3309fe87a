/**
 * What a technician writes must come through intact. Expected HTML follows CommonMark / GitHub
 * Flavored Markdown (the GFM spec, tables and task-list extensions), with our two changes:
 * headings shifted one level and raw HTML shown as text.
 */
import { describe, expect, it } from 'vitest';
import { clearMarkdownCache, renderInline, renderMarkdown, renderMarkdownUncached, stripMarkdown } from './index';
import { StringLru } from './lru';
import { allowedImageSrc, classifyHref } from './url-policy';

const PREFIX = '/o/fernhollow/attachments/';

const READINGS = `## Readings at 10 V · 1 kΩ · 60 Hz

| Test point | Known-good | Fault |
|:-----------|-----------:|------:|
| U12 pin 7 ↔ GND | knee ≈ 0.65 V | 4.7 Ω short |
| C31 (+) ↔ GND | 470 µF, ESR 0.1 Ω | open |
`;

describe('normal technician Markdown', () => {
	it('keeps a table of readings with Ω, µ, ≈ and the probe arrow', () => {
		const html = renderMarkdown(READINGS);
		expect(html).toContain('<h3>Readings at 10 V · 1 kΩ · 60 Hz</h3>');
		expect(html).toContain('<th align="left">Test point</th>');
		expect(html).toContain('<td align="left">U12 pin 7 ↔ GND</td>');
		expect(html).toContain('<td align="right">knee ≈ 0.65 V</td>');
		expect(html).toContain('<td align="right">470 µF, ESR 0.1 Ω</td>');
	});

	it('keeps code blocks verbatim, escaped, with their language', () => {
		const md = '```csv\nv,i\n-0.65,-0.001\n0.65,0.0025\n```';
		expect(renderMarkdown(md)).toBe(
			'<pre><code class="language-csv">v,i\n-0.65,-0.001\n0.65,0.0025\n</code></pre>\n'
		);
	});

	it('keeps code spans, with angle brackets shown as written', () => {
		expect(renderMarkdown('Probe `U12 pin 7 ↔ GND`, expect `<1 Ω`.')).toBe(
			'<p>Probe <code>U12 pin 7 ↔ GND</code>, expect <code>&lt;1 Ω</code>.</p>\n'
		);
	});

	it('keeps emphasis, strike-through, lists, quotes and rules', () => {
		const md = '*warm* **hot** ~~cold~~\n\n1. Discharge C12\n2. Probe\n\n- a\n- b\n\n> Seen twice on rev B\n\n---';
		expect(renderMarkdown(md)).toBe(
			'<p><em>warm</em> <strong>hot</strong> <del>cold</del></p>\n' +
				'<ol>\n<li>Discharge C12</li>\n<li>Probe</li>\n</ol>\n' +
				'<ul>\n<li>a</li>\n<li>b</li>\n</ul>\n' +
				'<blockquote>\n<p>Seen twice on rev B</p>\n</blockquote>\n' +
				'<hr>\n'
		);
	});

	it('keeps an ordered list that starts later', () => {
		expect(renderMarkdown('3. three\n4. four')).toBe('<ol start="3">\n<li>three</li>\n<li>four</li>\n</ol>\n');
	});

	it('shows task-list boxes as characters, not form controls', () => {
		expect(renderMarkdown('- [x] reflowed\n- [ ] retest')).toBe('<ul>\n<li>☑ reflowed</li>\n<li>☐ retest</li>\n</ul>\n');
	});

	it('keeps entities and a lone ampersand as text', () => {
		expect(renderMarkdown('R&D: 10&nbsp;kΩ &amp; up')).toBe('<p>R&amp;D: 10&nbsp;kΩ &amp; up</p>\n');
	});
});

describe('headings', () => {
	it('never emits h1: every level moves down one', () => {
		expect(renderMarkdown('# One\n\n## Two\n\n##### Five')).toBe('<h2>One</h2>\n<h3>Two</h3>\n<h6>Five</h6>\n');
	});

	it('keeps h6 as the deepest level', () => {
		expect(renderMarkdown('###### Six')).toBe('<h6>Six</h6>\n');
	});

	it('shifts setext headings too', () => {
		expect(renderMarkdown('Title\n=====')).toBe('<h2>Title</h2>\n');
	});
});

describe('links', () => {
	it('marks external links noopener noreferrer nofollow', () => {
		expect(renderMarkdown('[datasheet](https://parts.example/1n4148.pdf)')).toBe(
			'<p><a href="https://parts.example/1n4148.pdf" rel="noopener noreferrer nofollow">datasheet</a></p>\n'
		);
	});

	it('keeps relative links as written, without rel', () => {
		expect(renderMarkdown('[see also](../entries/42#plot)')).toBe('<p><a href="../entries/42#plot">see also</a></p>\n');
	});

	it('keeps mailto links', () => {
		expect(renderMarkdown('<bench@depot.example>')).toBe(
			'<p><a href="mailto:bench@depot.example">bench@depot.example</a></p>\n'
		);
	});

	it('links bare web addresses (GFM autolinks)', () => {
		expect(renderMarkdown('www.parts.example')).toBe(
			'<p><a href="http://www.parts.example/" rel="noopener noreferrer nofollow">www.parts.example</a></p>\n'
		);
	});

	it('resolves reference links', () => {
		expect(renderMarkdown('[notes][n]\n\n[n]: /o/fernhollow/entries/7')).toBe(
			'<p><a href="/o/fernhollow/entries/7">notes</a></p>\n'
		);
	});
});

describe('images', () => {
	it('shows our own attachments', () => {
		expect(renderMarkdown(`![C12 bulging](${PREFIX}9f2c.jpg "top side")`, { attachmentPrefix: PREFIX })).toBe(
			`<p><img src="${PREFIX}9f2c.jpg" alt="C12 bulging" title="top side"></p>\n`
		);
	});

	it('accepts the prefix with or without its trailing slash', () => {
		expect(renderMarkdown(`![a](${PREFIX}x.png)`, { attachmentPrefix: '/o/fernhollow/attachments' })).toContain(
			`<img src="${PREFIX}x.png"`
		);
	});
});

describe('renderInline', () => {
	it('renders one line with emphasis and code, no paragraph', () => {
		expect(renderInline('No output, `U12 pin 7 ↔ GND` reads *short*')).toBe(
			'No output, <code>U12 pin 7 ↔ GND</code> reads <em>short</em>'
		);
	});

	it('joins lines and drops block structure', () => {
		expect(renderInline('# Fan\nstalls')).toBe('# Fan stalls');
	});

	it('shows images as their alt text', () => {
		expect(renderInline(`burnt ![R5](${PREFIX}r5.jpg)`, { attachmentPrefix: PREFIX })).toBe('burnt R5');
	});
});

describe('stripMarkdown', () => {
	it('gives the words of a body, one block per line, cells tab-separated', () => {
		expect(stripMarkdown(READINGS)).toBe(
			'Readings at 10 V · 1 kΩ · 60 Hz\n' +
				'Test point\tKnown-good\tFault\n' +
				'U12 pin 7 ↔ GND\tknee ≈ 0.65 V\t4.7 Ω short\n' +
				'C31 (+) ↔ GND\t470 µF, ESR 0.1 Ω\topen'
		);
	});

	it('keeps link text and image alt text, drops targets, decodes entities', () => {
		expect(stripMarkdown('See [the log](https://x.example/l) &amp; ![C12](/o/a/attachments/c.jpg) &lt;3')).toBe(
			'See the log & C12 <3'
		);
	});

	it('keeps code text', () => {
		expect(stripMarkdown('```\nLM317T\n```')).toBe('LM317T');
	});
});

describe('the render cache', () => {
	it('returns the same output as an uncached render', () => {
		clearMarkdownCache();
		const first = renderMarkdown(READINGS, { attachmentPrefix: PREFIX });
		expect(renderMarkdown(READINGS, { attachmentPrefix: PREFIX })).toBe(first);
		expect(renderMarkdownUncached(READINGS, { attachmentPrefix: PREFIX })).toBe(first);
	});

	it('keys on the options: a different prefix is a different render', () => {
		const md = `![a](${PREFIX}a.png)`;
		expect(renderMarkdown(md, { attachmentPrefix: PREFIX })).toContain('<img');
		expect(renderMarkdown(md, { attachmentPrefix: '/o/elsewhere/attachments/' })).not.toContain('<img');
	});
});

describe('StringLru', () => {
	it('evicts the least recently used entry first', () => {
		const lru = new StringLru(2, 1000);
		lru.set('a', '1');
		lru.set('b', '2');
		lru.get('a');
		lru.set('c', '3');
		expect([lru.get('a'), lru.get('b'), lru.get('c')]).toEqual(['1', undefined, '3']);
	});

	it('bounds the total length of the values', () => {
		const lru = new StringLru(100, 10);
		lru.set('a', '12345');
		lru.set('b', '12345');
		lru.set('c', '1');
		expect(lru.get('a')).toBeUndefined();
		expect(lru.size).toBe(2);
		lru.set('huge', 'x'.repeat(11));
		expect(lru.get('huge')).toBeUndefined();
	});
});

// URL rules follow the WHATWG URL Standard's parser, which Node implements like browsers do.
describe('classifyHref', () => {
	it.each([
		['https://parts.example/a', 'external'],
		['HTTP://parts.example/a', 'external'],
		['//parts.example/a', 'external'],
		['\\\\parts.example/a', 'external'],
		['/o/fernhollow/entries/1', 'internal'],
		['../42', 'internal'],
		['#plot', 'internal'],
		['?page=2', 'internal'],
		['mailto:bench@depot.example', 'mailto']
	])('%s is %s', (href, kind) => {
		expect(classifyHref(href)?.kind).toBe(kind);
	});

	it.each([
		'javascript:alert(1)',
		' JavaScript:alert(1)',
		'java\tscript:alert(1)',
		'java\nscript:alert(1)',
		'data:text/html,<b>x</b>',
		'vbscript:msgbox(1)',
		'file:///etc/passwd',
		'ftp://files.example/a',
		'tel:+15550100',
		'http:relative',
		''
	])('refuses %j', (href) => {
		expect(classifyHref(href)).toBeNull();
	});
});

describe('allowedImageSrc', () => {
	it('accepts a path under the prefix and returns it resolved', () => {
		expect(allowedImageSrc(`${PREFIX}./a.png?v=2`, PREFIX)).toBe(`${PREFIX}a.png?v=2`);
	});

	it.each([
		'https://cdn.example/a.png',
		'//cdn.example/a.png',
		'/\\cdn.example/a.png',
		'a.png',
		'/o/elsewhere/attachments/a.png',
		`${PREFIX}../../elsewhere/attachments/a.png`,
		`${PREFIX}%2e%2e/%2E%2E/elsewhere/attachments/a.png`,
		PREFIX,
		'data:image/png;base64,iVBORw0KGgo=',
		'javascript:alert(1)'
	])('refuses %j', (src) => {
		expect(allowedImageSrc(src, PREFIX)).toBeNull();
	});

	it('refuses everything without a prefix', () => {
		expect(allowedImageSrc(`${PREFIX}a.png`, undefined)).toBeNull();
	});
});
