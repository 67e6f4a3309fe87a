/** Remembers, for the check-your-mail page, which address a link went to (not put in the URL). */
export const SENT_TO_COOKIE = 'curvelore_sign_in_sent_to';
