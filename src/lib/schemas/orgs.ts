import { z } from 'zod';
import { ROLES } from '../roles';

/**
 * Input rules for organisations, members, invitations and API tokens, shared by form actions,
 * JSON endpoints and form hints. Free of server imports, so the browser can use them too.
 */

/** The slug's shape, as the database's check constraint has it: 1–40 of a–z, 0–9 and inner hyphens. */
export const SLUG_PATTERN = /^[a-z0-9](?:[a-z0-9-]{0,38}[a-z0-9])?$/;

/**
 * Words that name, or may one day name, a part of the app rather than an organisation. Slugs live
 * under /o/, but refusing these keeps addresses unambiguous if that prefix is ever dropped, and
 * keeps people from making an organisation look like an official page.
 */
export const RESERVED_SLUGS: ReadonlySet<string> = new Set([
	'about', 'account', 'accounts', 'admin', 'administrator', 'api', 'app', 'assets', 'audit', 'auth',
	'billing', 'curvelore', 'dashboard', 'demo-admin', 'dev', 'docs', 'edit', 'entries', 'favicon',
	'health', 'help', 'home', 'invitation', 'invitations', 'invite', 'login', 'logout', 'mail',
	'mailbox', 'me', 'members', 'new', 'null', 'o', 'org', 'orgs', 'organisation', 'organisations',
	'organization', 'organizations', 'profile', 'root', 'search', 'settings', 'signin', 'signout',
	'signup', 'static', 'status', 'support', 'system', 'undefined', 'www'
]);

const trimmed = (max: number, what: string) =>
	z
		.string({ error: `Enter ${what}.` })
		.trim()
		.min(1, `Enter ${what}.`)
		.max(max, `Keep ${what} to ${max} characters or fewer.`);

export const slug = z
	.string({ error: 'Enter an address for the organisation.' })
	.trim()
	.toLowerCase()
	.min(3, 'Use at least 3 characters.')
	.max(40, 'Use 40 characters or fewer.')
	.regex(SLUG_PATTERN, 'Use lowercase letters, digits and hyphens; start and end with a letter or digit.')
	.refine((s) => !RESERVED_SLUGS.has(s), 'That address is reserved. Choose another.');

export const role = z.enum(ROLES, { error: 'Choose one of the roles listed.' });

export const email = z
	.string({ error: 'Enter an e-mail address.' })
	.trim()
	.toLowerCase()
	.min(1, 'Enter an e-mail address.')
	.max(254, 'That e-mail address is too long.')
	.pipe(z.email('Enter a valid e-mail address, like name@example.com.'));

/** An organisation's display name; the database's organisation_name_length check backs it. */
export const orgName = trimmed(120, 'a name');

export const orgCreate = z.object({ name: orgName, slug });
export type OrgCreate = z.infer<typeof orgCreate>;

/** The settings page's rename: the name only, since the address (slug) never changes. */
export const orgRename = z.object({ name: orgName });
export type OrgRename = z.infer<typeof orgRename>;

export const invitationCreate = z.object({ email, role });
export type InvitationCreate = z.infer<typeof invitationCreate>;

export const memberRoleChange = z.object({ userId: z.string().min(1).max(100), role });
export type MemberRoleChange = z.infer<typeof memberRoleChange>;

export const memberRemove = z.object({ userId: z.string().min(1).max(100) });

export const invitationRef = z.object({ id: z.uuid('Unknown invitation.') });

export const apiTokenCreate = z.object({
	name: trimmed(60, 'a name for the token'),
	org: z.string({ error: 'Choose an organisation.' }).min(1, 'Choose an organisation.').max(40).regex(SLUG_PATTERN, 'Choose an organisation.'),
	role
});
export type ApiTokenCreate = z.infer<typeof apiTokenCreate>;

export const apiTokenRef = z.object({ id: z.uuid('Unknown token.') });

/** Suggests a slug from an organisation name: "Müller & Söhne Repairs" → "muller-sohne-repairs". */
export function suggestSlug(name: string): string {
	return name
		.normalize('NFKD')
		.replace(/[\u0300-\u036f]/g, '')
		.toLowerCase()
		.replace(/[^a-z0-9]+/g, '-')
		.replace(/^-+|-+$/g, '')
		.slice(0, 40)
		.replace(/-+$/, '');
}
