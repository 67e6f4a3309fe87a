import { z } from 'zod';

/**
 * The server's configuration, validated once from the environment so a bad value stops the app at
 * boot with a clear message instead of failing mid-request. Pure: takes the variables, returns
 * values or throws a ConfigError listing every problem.
 */
const emptyToUndefined = (v: unknown) => (typeof v === 'string' && v.trim() === '' ? undefined : v);

const url = (protocols: string[], what: string) =>
	z.preprocess(
		emptyToUndefined,
		z
			.string()
			.refine((s) => {
				try {
					return protocols.includes(new URL(s).protocol);
				} catch {
					return false;
				}
			}, `${what} must be a URL starting with ${protocols.map((p) => `${p}//`).join(' or ')}`)
	);

const configSchema = z.object({
	DATABASE_URL: url(['postgres:', 'postgresql:'], 'DATABASE_URL'),
	ORIGIN: url(['http:', 'https:'], 'ORIGIN').optional(),
	AUTH_SECRET: z.preprocess(
		emptyToUndefined,
		z.string().min(32, 'AUTH_SECRET must be at least 32 characters (npm start generates one).').optional()
	),
	SMTP_URL: url(['smtp:', 'smtps:'], 'SMTP_URL').optional(),
	SMTP_FROM: z.preprocess(emptyToUndefined, z.string().optional()),
	MEILISEARCH_URL: url(['http:', 'https:'], 'MEILISEARCH_URL').optional(),
	MEILISEARCH_KEY: z.preprocess(emptyToUndefined, z.string().optional()),
	DATABASE_POOL_MAX: z.preprocess(
		emptyToUndefined,
		z.coerce.number().int('DATABASE_POOL_MAX must be a whole number.').min(1).max(200).default(10)
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
			return issue.code === 'invalid_type' && issue.input === undefined
				? `${name} is not set.`
				: `${name}: ${issue.message}`;
		})
	);
}
