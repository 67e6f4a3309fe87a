// See https://svelte.dev/docs/kit/types#app.d.ts
// @auth/sveltekit adds locals.auth() to App.Locals itself.
declare global {
	namespace App {
		interface Error {
			message: string;
			errorId?: string;
			/** API routes: the stable machine-readable form, `{ code, message }`. */
			error?: { code: string; message: string };
		}
		interface Locals {
			/** Who is calling, once a guard or the token check has worked it out for this request. */
			principal?: import('$lib/server/auth/guard').Principal;
		}
		// interface PageData {}
		// interface PageState {}
		// interface Platform {}
	}
}

export {};
