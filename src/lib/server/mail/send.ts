import { config } from '../env';
import { DEFAULT_FROM, mailTransport } from './transport';

export interface Mail {
	subject: string;
	text: string;
	html: string;
}

/**
 * Sends one message through the configured SMTP relay (or the local stand-in). Resolves false
 * instead of throwing when it cannot be sent: callers have already committed their work, and
 * mail is a notice about it, not part of it.
 */
export async function sendMail(to: string, mail: Mail): Promise<boolean> {
	const { SMTP_URL, SMTP_FROM } = config();
	if (!SMTP_URL) return false;
	try {
		const result = await mailTransport(SMTP_URL).sendMail({ to, from: SMTP_FROM ?? DEFAULT_FROM, ...mail });
		return (result.rejected ?? []).length === 0;
	} catch (e) {
		console.error('Sending an e-mail failed:', e instanceof Error ? e.message : e);
		return false;
	}
}

export const escapeHtml = (s: string) =>
	s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;').replace(/'/g, '&#39;');

/**
 * The shared frame of our notice mails: a heading, paragraphs of already-escaped HTML, one
 * button-like link. Inline colours, because mail clients ignore stylesheets (light theme values
 * from app.css).
 */
export function noticeHtml(heading: string, paragraphs: string[], link: { href: string; label: string }): string {
	const href = escapeHtml(link.href);
	return `<!doctype html>
<html lang="en"><body style="margin:0;padding:24px;font-family:system-ui,sans-serif;color:#1c2327;background:#f5f6f2">
<div style="max-width:32rem;margin:0 auto;background:#ffffff;border:1px solid #d3d8d2;border-radius:10px;padding:24px">
<h1 style="font-size:20px;margin:0 0 12px">${escapeHtml(heading)}</h1>
${paragraphs.map((p) => `<p style="margin:0 0 16px">${p}</p>`).join('\n')}
<p style="margin:0 0 16px"><a href="${href}" style="display:inline-block;background:#0b6b66;color:#ffffff;padding:10px 18px;border-radius:6px;text-decoration:none;font-weight:600">${escapeHtml(link.label)}</a></p>
<p style="margin:0;font-size:14px;color:#535e66">Or paste this link into your browser:<br><a href="${href}" style="color:#0b6b66;word-break:break-all">${href}</a></p>
</div></body></html>`;
}
