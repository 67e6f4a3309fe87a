import { describe, expect, it } from 'vitest';
import { safeRedirectPath, safeRedirectUrl } from '../../src/lib/server/auth/redirect';

// The cases are the usual open-redirect tricks (common practice, no source; OWASP's
// "Unvalidated Redirects and Forwards" cheat sheet lists the same families, from memory).
describe('safeRedirectPath', () => {
	it('keeps same-site paths with their query and fragment', () => {
		expect(safeRedirectPath('/o/fernhollow/entries?q=knee#top')).toBe('/o/fernhollow/entries?q=knee#top');
		expect(safeRedirectPath('/profile')).toBe('/profile');
	});

	it.each([
		['https://evil.example/x'],
		['//evil.example/x'],
		['/\\evil.example/x'],
		['\\\\evil.example'],
		['javascript:alert(1)'],
		['evil.example'],
		['/%0d%0aSet-Cookie:x'.replace('%0d%0a', '\r\n')],
		['/\tfoo'],
		[' /profile'],
		['']
	])('refuses %j', (raw) => {
		expect(safeRedirectPath(raw)).toBe('/');
	});

	it('refuses non-strings and overlong values', () => {
		expect(safeRedirectPath(undefined)).toBe('/');
		expect(safeRedirectPath(null)).toBe('/');
		expect(safeRedirectPath(['/profile'])).toBe('/');
		expect(safeRedirectPath('/' + 'a'.repeat(2001))).toBe('/');
	});

	it('never sends people back into the sign-in machinery', () => {
		expect(safeRedirectPath('/auth/signout')).toBe('/');
		expect(safeRedirectPath('/login?redirectTo=/login')).toBe('/');
	});

	it('normalises dot segments without leaving the site', () => {
		expect(safeRedirectPath('/a/../../b')).toBe('/b');
		expect(safeRedirectPath('/./profile')).toBe('/profile');
	});

	it('uses the given fallback', () => {
		expect(safeRedirectPath('https://evil.example', '/profile')).toBe('/profile');
	});
});

describe('safeRedirectUrl', () => {
	const origin = 'http://localhost:3000';
	it('keeps same-origin URLs and relative paths', () => {
		expect(safeRedirectUrl('http://localhost:3000/profile', origin)).toBe('http://localhost:3000/profile');
		expect(safeRedirectUrl('/profile', origin)).toBe('http://localhost:3000/profile');
	});
	it('sends other origins, other ports and other schemes home', () => {
		expect(safeRedirectUrl('https://evil.example/profile', origin)).toBe('http://localhost:3000/');
		expect(safeRedirectUrl('http://localhost:3001/profile', origin)).toBe('http://localhost:3000/');
		expect(safeRedirectUrl('https://localhost:3000/profile', origin)).toBe('http://localhost:3000/');
		expect(safeRedirectUrl('//evil.example', origin)).toBe('http://localhost:3000/');
	});
});
