import { z } from 'zod';

/** The sign-in form: one e-mail address; where to return to is checked separately. */
export const signInRequest = z.object({
	email: z
		.string({ error: 'Enter your e-mail address.' })
		.trim()
		.min(1, 'Enter your e-mail address.')
		.max(254, 'That address is too long (254 characters at most).')
		.pipe(z.email({ error: 'Enter a full e-mail address, like name@example.com.' }))
		.transform((s) => s.toLowerCase()),
	redirectTo: z.string().max(2000).optional()
});
export type SignInRequest = z.infer<typeof signInRequest>;

export const DISPLAY_NAME_MAX = 80;

/** The profile form. The name is shown to colleagues next to entries, reviews and comments. */
export const profileUpdate = z.object({
	name: z
		.string({ error: 'Enter a display name.' })
		// Collapse runs of white space so "  Ada   M. " is stored as "Ada M.".
		.transform((s) => s.replace(/\s+/g, ' ').trim())
		.pipe(
			z
				.string()
				.min(1, 'Enter a display name.')
				.max(DISPLAY_NAME_MAX, `Keep the display name to ${DISPLAY_NAME_MAX} characters or fewer.`)
				// eslint-disable-next-line no-control-regex
				.refine((s) => !/[\u0000-\u001f\u007f]/.test(s), 'The display name cannot contain control characters.')
		)
});
export type ProfileUpdate = z.infer<typeof profileUpdate>;
