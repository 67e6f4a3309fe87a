import { z } from 'zod';

/**
 * The server's configuration, validated once from the environment so a bad value stops the app at
 * boot with a clear message instead of failing mid-request. Pure: takes the variables, returns
 * values or throws a ConfigError listing every problem.
 */
const emptyToUndefined = (v: unknown) => (typeof v === 'string' && v.trim() === '' ? undefined : v);

const urlString = (protocols: string[], what: string) =>
	z
		.string()
		.refine((s) => {
			try {
				return protocols.includes(new URL(s).protocol);
			} catch {
				return false;
			}
		}, `${what} must be a URL starting with ${protocols.map((p) => `${p}//`).join(' or ')}`);

// Optionality sits inside the preprocess: an empty string becomes undefined first, then may be absent.
const url = (protocols: string[], what: string) =>
	z.preprocess(emptyToUndefined, urlString(protocols, what));
const optionalUrl = (protocols: string[], what: string) =>
	z.preprocess(emptyToUndefined, urlString(protocols, what).optional());

const configSchema = z.object({
	DATABASE_URL: url(['postgres:', 'postgresql:'], 'DATABASE_URL'),
	ORIGIN: optionalUrl(['http:', 'https:'], 'ORIGIN'),
	AUTH_SECRET: z.preprocess(
		emptyToUndefined,
		z.string().min(32, 'AUTH_SECRET must be at least 32 characters (npm start generates one).').optional()
	),
	SMTP_URL: optionalUrl(['smtp:', 'smtps:'], 'SMTP_URL'),
	SMTP_FROM: z.preprocess(emptyToUndefined, z.string().optional()),
	// Set only by the local SMTP stand-in (npm start / npm test): where its captured mail is read.
	DEV_MAILBOX_URL: optionalUrl(['http:'], 'DEV_MAILBOX_URL'),
	MEILISEARCH_URL: optionalUrl(['http:', 'https:'], 'MEILISEARCH_URL'),
	MEILISEARCH_KEY: z.preprocess(emptyToUndefined, z.string().optional()),
	// Sign-in links per 15 minutes, per e-mail address and per client address (see auth/rate-limit.ts).
	SIGN_IN_LINKS_PER_ADDRESS: z.preprocess(
		emptyToUndefined,
		z.coerce.number().int('SIGN_IN_LINKS_PER_ADDRESS must be a whole number.').min(1).max(1000).optional().default(5)
	),
	SIGN_IN_LINKS_PER_CLIENT: z.preprocess(
		emptyToUndefined,
		z.coerce.number().int('SIGN_IN_LINKS_PER_CLIENT must be a whole number.').min(1).max(10000).optional().default(20)
	),
	// Invitation e-mails (see orgs/invitation-limits.ts): the wait between two mails of one
	// invitation, its resends per 24 hours, and the mails one organisation sends per hour.
	INVITATION_RESEND_INTERVAL_SECONDS: z.preprocess(
		emptyToUndefined,
		z.coerce.number().int('INVITATION_RESEND_INTERVAL_SECONDS must be a whole number.').min(0).max(86400).optional().default(60)
	),
	INVITATION_RESENDS_PER_DAY: z.preprocess(
		emptyToUndefined,
		z.coerce.number().int('INVITATION_RESENDS_PER_DAY must be a whole number.').min(1).max(1000).optional().default(5)
	),
	INVITATION_MAILS_PER_ORG_PER_HOUR: z.preprocess(
		emptyToUndefined,
		z.coerce.number().int('INVITATION_MAILS_PER_ORG_PER_HOUR must be a whole number.').min(1).max(100000).optional().default(50)
	),
	DATABASE_POOL_MAX: z.preprocess(
		emptyToUndefined,
		z.coerce.number().int('DATABASE_POOL_MAX must be a whole number.').min(1).max(200).optional().default(10)
	)
});

export type Config = z.infer<typeof configSchema>;

export class ConfigError extends Error {
	constructor(readonly problems: string[]) {
		super(`Configuration is not valid:\n${problems.map((p) => `  - ${p}`).join('\n')}`);
		this.name = 'ConfigError';
	}
}

export function loadConfig(source: Record<string, string | undefined>): Config {
	const parsed = configSchema.safeParse(source);
	if (parsed.success) return parsed.data;
	throw new ConfigError(
		parsed.error.issues.map((issue) => {
			const name = issue.path.join('.');
			return emptyToUndefined(source[name]) === undefined
				? `${name} is not set.`
				: `${name}: ${issue.message}`;
		})
	);
}
