import { Auth, raw, skipCSRFCheck } from '@auth/core';
import { KyselyAdapter } from '@auth/kysely-adapter';
import { SvelteKitAuth, type SvelteKitAuthConfig } from '@auth/sveltekit';
import Nodemailer from '@auth/sveltekit/providers/nodemailer';
import type { Cookies } from '@sveltejs/kit';
import { safeRedirectUrl } from '$lib/server/auth/redirect';
import { adapterDb } from '$lib/server/auth/tables';
import { db } from '$lib/server/db';
import { config } from '$lib/server/env';
import { signInMail } from '$lib/server/mail/sign-in-mail';
import { DEFAULT_FROM, mailTransport } from '$lib/server/mail/transport';

/** How long a sign-in link works. Short, because a link in an inbox is as good as a password. */
export const SIGN_IN_LINK_MINUTES = 30;
/** How long a browser stays signed in without using the app. */
const SESSION_DAYS = 30;

let cached: SvelteKitAuthConfig | undefined;

/** Auth.js settings, built on first request so `vite build` needs no environment. */
export function authConfig(): SvelteKitAuthConfig {
	if (cached) return cached;
	const { AUTH_SECRET, SMTP_URL, SMTP_FROM } = config();
	cached = {
		// adapter-node serves behind ORIGIN; Auth.js ignores AUTH_TRUST_HOST outside dev.
		trustHost: true,
		secret: AUTH_SECRET,
		basePath: '/auth',
		// SvelteKit's own Origin check guards every POST, so Auth.js's double-submit token is off.
		skipCSRFCheck,
		adapter: KyselyAdapter(adapterDb(db)),
		session: { strategy: 'database', maxAge: SESSION_DAYS * 24 * 60 * 60, updateAge: 24 * 60 * 60 },
		pages: { signIn: '/login', verifyRequest: '/login/check-email', error: '/login/error' },
		providers: [
			Nodemailer({
				// The provider insists on a server; without SMTP_URL sending fails with a clear log line.
				server: SMTP_URL ?? 'smtp://mail-relay-not-configured.invalid:25',
				from: SMTP_FROM ?? DEFAULT_FROM,
				maxAge: SIGN_IN_LINK_MINUTES * 60,
				async sendVerificationRequest({ identifier, url, expires, provider }) {
					if (!SMTP_URL) throw new Error('SMTP_URL is not set, so no sign-in e-mail can be sent.');
					const mail = signInMail({ url, host: new URL(url).host, expires, now: new Date() });
					const result = await mailTransport(SMTP_URL).sendMail({
						to: identifier,
						from: provider.from,
						subject: mail.subject,
						text: mail.text,
						html: mail.html
					});
					const failed = [...(result.rejected ?? []), ...(result.pending ?? [])].filter(Boolean);
					if (failed.length) throw new Error(`The mail relay refused the sign-in e-mail for ${failed.length} recipient(s).`);
				}
			})
		],
		callbacks: {
			// Never leave the site after signing in or out, whatever callbackUrl says.
			redirect: ({ url, baseUrl }) => safeRedirectUrl(url, baseUrl),
			session: ({ session, user }) => ({
				...session,
				user: { id: user.id, email: user.email, name: user.name ?? null, image: null }
			})
		}
	};
	return cached;
}

export const { handle: authHandle, signOut } = SvelteKitAuth(async () => authConfig());

export type SignInLinkResult = { sent: true; redirect: string } | { sent: false };

/**
 * Asks Auth.js to create a verification token and mail the link, exactly as a POST to
 * /auth/signin/nodemailer would, but from our own form action, so the address is validated and the
 * rate limit applied first. Returns where to send the browser (the check-your-mail page).
 */
export async function requestSignInLink(
	event: { url: URL; request: Request; cookies: Cookies },
	email: string,
	redirectTo: string
): Promise<SignInLinkResult> {
	const headers = new Headers(event.request.headers);
	headers.set('content-type', 'application/x-www-form-urlencoded');
	const body = new URLSearchParams({ email, callbackUrl: new URL(redirectTo, event.url.origin).href });
	const request = new Request(`${event.url.origin}/auth/signin/nodemailer`, { method: 'POST', headers, body });
	let response;
	try {
		response = await Auth(request, { ...authConfig(), raw });
	} catch (e) {
		console.error('Sending a sign-in link failed:', e);
		return { sent: false };
	}
	for (const c of response.cookies ?? []) event.cookies.set(c.name, c.value, { path: '/', ...c.options });
	const target = response.redirect ?? '';
	// Success is a redirect to Auth.js's verify-request step (which would forward to our
	// check-your-mail page); a failure to send redirects to the error page instead.
	const path = target ? new URL(target, event.url.origin).pathname : '';
	if (path !== '/auth/verify-request' && path !== '/login/check-email') {
		console.error('Sending a sign-in link failed; Auth.js redirected to', target);
		return { sent: false };
	}
	return { sent: true, redirect: target };
}
