import { escapeHtml, type Mail, noticeHtml } from '../mail/send';

/**
 * The review notices, as pure builders: what reviewers get when an entry is submitted, and what
 * its writer gets when it is sent back or published. Links are absolute (`origin` + path).
 */

interface About {
	origin: string;
	orgSlug: string;
	orgName: string;
	entryId: string;
	title: string;
}

export const entryPath = (orgSlug: string, id: string) => `/o/${orgSlug}/entries/${id}`;
export const editPath = (orgSlug: string, id: string) => `/o/${orgSlug}/entries/${id}/edit`;
export const reviewPath = (orgSlug: string) => `/o/${orgSlug}/review`;

/** To every author and admin: someone's entry is waiting for their review. */
export function submittedMail(about: About & { writer: string; symptom: string }): Mail {
	const entryUrl = `${about.origin}${entryPath(about.orgSlug, about.entryId)}`;
	const queueUrl = `${about.origin}${reviewPath(about.orgSlug)}`;
	return {
		subject: `Review: ${about.title}`,
		text: [
			`${about.writer} submitted an entry for review in ${about.orgName}:`,
			'',
			`  ${about.title}`,
			`  Symptom: ${about.symptom}`,
			'',
			'Read it:',
			entryUrl,
			'',
			'Publish it or send it back with a comment from the review queue:',
			queueUrl,
			''
		].join('\n'),
		html: noticeHtml(
			`Waiting for your review`,
			[
				`${escapeHtml(about.writer)} submitted an entry for review in <strong>${escapeHtml(about.orgName)}</strong>:`,
				`<strong>${escapeHtml(about.title)}</strong><br>Symptom: ${escapeHtml(about.symptom)}`,
				`Publish it or send it back with a comment from the <a href="${escapeHtml(queueUrl)}" style="color:#0b6b66">review queue</a>.`
			],
			{ href: entryUrl, label: 'Read the entry' }
		)
	};
}

/** To the writer: an author sent the entry back, and why. */
export function returnedMail(about: About & { reviewer: string; comment: string }): Mail {
	const editUrl = `${about.origin}${editPath(about.orgSlug, about.entryId)}`;
	return {
		subject: `Sent back: ${about.title}`,
		text: [
			`${about.reviewer} sent your entry “${about.title}” in ${about.orgName} back to you, saying:`,
			'',
			...about.comment.split(/\r?\n/).map((line) => `> ${line}`),
			'',
			'It is a draft again. Change it and submit it once more:',
			editUrl,
			''
		].join('\n'),
		html: noticeHtml(
			'Your entry was sent back',
			[
				`${escapeHtml(about.reviewer)} sent your entry <strong>${escapeHtml(about.title)}</strong> in ${escapeHtml(about.orgName)} back to you, saying:`,
				`<span style="display:block;border-left:4px solid #d3d8d2;padding-left:12px;white-space:pre-wrap">${escapeHtml(about.comment)}</span>`,
				'It is a draft again. Change it and submit it once more.'
			],
			{ href: editUrl, label: 'Open the entry' }
		)
	};
}

/** To the writer: an author published the entry. */
export function publishedMail(about: About & { reviewer: string }): Mail {
	const entryUrl = `${about.origin}${entryPath(about.orgSlug, about.entryId)}`;
	return {
		subject: `Published: ${about.title}`,
		text: [`${about.reviewer} published your entry “${about.title}” in ${about.orgName}.`, '', entryUrl, ''].join('\n'),
		html: noticeHtml(
			'Your entry is published',
			[`${escapeHtml(about.reviewer)} published your entry <strong>${escapeHtml(about.title)}</strong> in ${escapeHtml(about.orgName)}.`],
			{ href: entryUrl, label: 'Read the entry' }
		)
	};
}
