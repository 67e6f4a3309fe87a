/**
 * Dates as the app shows them: "1 Dec 2026, 19:05 UTC". Fixed to UTC and an explicit locale so
 * server and browser render the same text (no hydration mismatch) on shop PCs in any time zone.
 */
const formatter = new Intl.DateTimeFormat('en-GB', {
	day: 'numeric',
	month: 'short',
	year: 'numeric',
	hour: '2-digit',
	minute: '2-digit',
	hour12: false,
	timeZone: 'UTC'
});

export function formatDate(value: Date | string): string {
	return `${formatter.format(new Date(value))} UTC`;
}
