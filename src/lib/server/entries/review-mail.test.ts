import { Window } from 'happy-dom';
import { afterAll, describe, expect, it } from 'vitest';
import { returnedMail, submittedMail } from './review-mail';

const window = new Window();
afterAll(() => window.close());
const parse = (html: string) => new window.DOMParser().parseFromString(html, 'text/html');

const about = { origin: 'https://bench.example', orgSlug: 'fernhollow', orgName: 'Fernhollow <Repairs>', entryId: '0b7d2a6e-8f0c-4d7e-9a51-2f0c7e4b9d21' };

describe('review mail', () => {
	it('tells reviewers what waits and links to the entry and the queue', () => {
		const mail = submittedMail({ ...about, title: 'C14 short', writer: 'Pim', symptom: 'Rail collapses' });
		expect(mail.subject).toBe('Review: C14 short');
		expect(mail.text).toContain(`https://bench.example/o/fernhollow/entries/${about.entryId}`);
		expect(mail.text).toContain('https://bench.example/o/fernhollow/review');
		const links = [...parse(mail.html).querySelectorAll('a')].map((a) => a.getAttribute('href'));
		expect(links).toContain(`https://bench.example/o/fernhollow/entries/${about.entryId}`);
	});

	it('carries the reviewer’s comment as text: markup in it, the title or the organisation name never becomes HTML', () => {
		const comment = 'Add the <img src=x onerror=alert(1)> known-good curve\nand the ESR';
		const mail = returnedMail({ ...about, title: '<script>alert(2)</script>', reviewer: 'Teodor', comment });
		const doc = parse(mail.html);
		expect(doc.querySelectorAll('script, img')).toHaveLength(0);
		expect(doc.body.textContent).toContain('<img src=x onerror=alert(1)> known-good curve');
		expect(doc.body.textContent).toContain('Fernhollow <Repairs>');
		expect(mail.text).toContain('> Add the <img src=x onerror=alert(1)> known-good curve\n> and the ESR');
		expect(mail.subject).toBe('Sent back: <script>alert(2)</script>');
	});
});
