import type { HandleServerError } from '@sveltejs/kit';

export const handleError: HandleServerError = ({ error, event, status, message }) => {
	const errorId = crypto.randomUUID();
	if (status !== 404) {
		console.error(`[${errorId}] ${event.request.method} ${event.url.pathname}:`, error);
	}
	// Never show internal error text to people: the id lets a shop lead find the log line.
	return { message: status === 404 ? 'Not found' : message, errorId };
};
