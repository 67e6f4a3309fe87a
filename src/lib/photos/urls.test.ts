import { describe, expect, it } from 'vitest';
import { renderMarkdown } from '../server/markdown';
import { altFromFileName, photoMarkdown, photoUrlPrefix, rewritePhotoUrls } from './urls';

const ID = '0b6f8a52-3c1d-4e2f-9a7b-5d4c3b2a1f00';
const OTHER_ID = '9a7b5d4c-3b2a-4f00-8b6f-8a523c1d4e2f';

describe('photo references in entry Markdown', () => {
	const options = { attachmentPrefix: photoUrlPrefix('fernhollow') };
	const render = (md: string) => renderMarkdown(md, options).trim();

	it("shows the organisation's own photo through the renderer's image rule", () => {
		const html = render(photoMarkdown('fernhollow', { id: ID, fileName: 'C12 top.jpg' }));
		expect(html).toBe(`<p><img src="/api/v1/orgs/fernhollow/photos/${ID}" alt="C12 top"></p>`);
	});

	it("shows another organisation's photo, or a path that climbs out of the prefix, as its alt text only", () => {
		expect(render(`![theirs](/api/v1/orgs/elsewhere/photos/${ID})`)).toBe('<p>theirs</p>');
		expect(render(`![climb](/api/v1/orgs/fernhollow/photos/../../elsewhere/photos/${ID})`)).toBe('<p>climb</p>');
		expect(render(`![encoded](/api/v1/orgs/fernhollow/photos/%2e%2e/%2e%2e/elsewhere/photos/${ID})`)).toBe('<p>encoded</p>');
		expect(render(`![abs](https://example.com/api/v1/orgs/fernhollow/photos/${ID})`)).toBe('<p>abs</p>');
	});

	it('escapes brackets in the alt text so the reference stays one image', () => {
		expect(photoMarkdown('fernhollow', { id: ID, fileName: 'x.png' }, 'R5 [burnt]')).toBe(`![R5 \\[burnt\\]](/api/v1/orgs/fernhollow/photos/${ID})`);
		expect(altFromFileName('board_top-side.png')).toBe('board top side');
	});
});

describe('rewritePhotoUrls', () => {
	it("points the source organisation's references at the imported photos and leaves the rest", () => {
		const md = `![a](/api/v1/orgs/source/photos/${ID}) and ![b](/api/v1/orgs/source/photos/${OTHER_ID}) and ![c](/api/v1/orgs/third/photos/${ID})`;
		const out = rewritePhotoUrls(md, 'source', 'target', new Map([[ID, 'aaaaaaaa-bbbb-4ccc-8ddd-eeeeeeeeeeee']]));
		expect(out).toBe(
			`![a](/api/v1/orgs/target/photos/aaaaaaaa-bbbb-4ccc-8ddd-eeeeeeeeeeee) and ![b](/api/v1/orgs/source/photos/${OTHER_ID}) and ![c](/api/v1/orgs/third/photos/${ID})`
		);
	});
});
