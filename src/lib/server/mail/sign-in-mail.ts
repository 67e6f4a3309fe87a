import { escapeHtml } from './send';
/** The product name as it appears in mail. */
const PRODUCT = 'Curvelore';

export interface SignInMail {
	subject: string;
	text: string;
	html: string;
}

// Mail clients ignore stylesheets and CSS variables, so the HTML carries inline colours copied
// from the light theme in app.css.

/** "30 minutes", "1 hour", "2 hours" — how long until `expires`, rounded to whole minutes. */
export function describeValidity(expires: Date, now: Date): string {
	const minutes = Math.max(1, Math.round((expires.getTime() - now.getTime()) / 60_000));
	if (minutes % 60 === 0) {
		const hours = minutes / 60;
		return hours === 1 ? '1 hour' : `${hours} hours`;
	}
	return minutes === 1 ? '1 minute' : `${minutes} minutes`;
}

/**
 * The sign-in e-mail: the link, how long it works, and what to do if it was not you. Plain text
 * first (many shop PCs read mail as text); the HTML is the same words with one button-like link.
 */
export function signInMail({ url, host, expires, now }: { url: string; host: string; expires: Date; now: Date }): SignInMail {
	const validity = describeValidity(expires, now);
	const subject = `Sign in to ${PRODUCT}`;
	const text = [
		`Sign in to ${PRODUCT} at ${host}`,
		'',
		'Open this link to sign in:',
		url,
		'',
		`The link works once and expires in ${validity}.`,
		'',
		`If you did not ask to sign in to ${PRODUCT}, ignore this e-mail: nobody can sign in without the link.`,
		''
	].join('\n');
	const link = escapeHtml(url);
	const html = `<!doctype html>
<html lang="en"><body style="margin:0;padding:24px;font-family:system-ui,sans-serif;color:#1c2327;background:#f5f6f2">
<div style="max-width:32rem;margin:0 auto;background:#ffffff;border:1px solid #d3d8d2;border-radius:10px;padding:24px">
<h1 style="font-size:20px;margin:0 0 12px">Sign in to ${PRODUCT}</h1>
<p style="margin:0 0 16px">Someone asked to sign in to ${PRODUCT} at ${escapeHtml(host)} with this address.</p>
<p style="margin:0 0 16px"><a href="${link}" style="display:inline-block;background:#0b6b66;color:#ffffff;padding:10px 18px;border-radius:6px;text-decoration:none;font-weight:600">Sign in</a></p>
<p style="margin:0 0 16px;font-size:14px">Or paste this link into your browser:<br><a href="${link}" style="color:#0b6b66;word-break:break-all">${link}</a></p>
<p style="margin:0 0 8px;font-size:14px">The link works once and expires in ${validity}.</p>
<p style="margin:0;font-size:14px;color:#535e66">If you did not ask to sign in, ignore this e-mail: nobody can sign in without the link.</p>
</div></body></html>`;
	return { subject, text, html };
}
