import nodemailer, { type Transporter } from 'nodemailer';

let cached: { url: string; transport: Transporter } | undefined;

/**
 * One pooled-free SMTP transport per process for the configured SMTP_URL (smtp:// or smtps://,
 * credentials in the URL). The local stand-in is an SMTP server too, so this is the only path.
 */
export function mailTransport(smtpUrl: string): Transporter {
	if (cached?.url !== smtpUrl) cached = { url: smtpUrl, transport: nodemailer.createTransport(smtpUrl) };
	return cached.transport;
}

/** The sender when SMTP_FROM is unset; `.invalid` is reserved, so replies cannot reach a stranger. */
export const DEFAULT_FROM = 'Curvelore <sign-in@curvelore.invalid>';
