import { escapeHtml } from '../mail/send';
import { ROLE_LABELS, type Role } from '../auth/permissions';

/** The invitation e-mail: who invites, to which organisation, with what role, and until when. Pure. */
export function invitationMail(input: { url: string; orgName: string; role: Role; inviter: string; expiresAt: Date }) {
	const role = ROLE_LABELS[input.role].toLowerCase();
	const until = input.expiresAt.toISOString().slice(0, 10);
	const subject = `You are invited to ${input.orgName} on Curvelore`;
	const text = [
		`${input.inviter} invites you to join ${input.orgName} on Curvelore as ${role}.`,
		'',
		'Open this link, then sign in with this e-mail address:',
		input.url,
		'',
		`The link works once, for this address only, until ${until}.`,
		'If you did not expect this, ignore the e-mail.',
		''
	].join('\n');
	const link = escapeHtml(input.url);
	// Inline colours: mail clients ignore stylesheets (values from the light theme in app.css).
	const html = `<!doctype html>
<html lang="en"><body style="margin:0;padding:24px;font-family:system-ui,sans-serif;color:#1c2327;background:#f5f6f2">
<div style="max-width:32rem;margin:0 auto;background:#ffffff;border:1px solid #d3d8d2;border-radius:10px;padding:24px">
<h1 style="font-size:20px;margin:0 0 12px">Join ${escapeHtml(input.orgName)}</h1>
<p style="margin:0 0 16px">${escapeHtml(input.inviter)} invites you to join <strong>${escapeHtml(input.orgName)}</strong> on Curvelore as ${role}.</p>
<p style="margin:0 0 16px"><a href="${link}" style="display:inline-block;background:#0b6b66;color:#ffffff;padding:10px 18px;border-radius:6px;text-decoration:none;font-weight:600">Accept the invitation</a></p>
<p style="margin:0 0 16px;font-size:14px">Or paste this link into your browser:<br><a href="${link}" style="color:#0b6b66;word-break:break-all">${link}</a></p>
<p style="margin:0;font-size:14px;color:#535e66">The link works once, for this address only, until ${until}. If you did not expect this, ignore the e-mail.</p>
</div></body></html>`;
	return { subject, text, html };
}

