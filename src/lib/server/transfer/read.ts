import { bundle, type Bundle, MAX_BUNDLE_BYTES } from '../../schemas/bundle';
import { type ApiIssue, toApiIssues } from '../api/errors';

export type BundleRead = { ok: true; bundle: Bundle } | { ok: false; status: 400 | 413; message: string; issues: ApiIssue[] };

export const BUNDLE_TOO_LARGE = `The bundle is larger than ${MAX_BUNDLE_BYTES / 1024 / 1024} MB. Export fewer entries at a time (one entry: ?entry=<id>) and import them one by one.`;

/** Parses and validates bundle bytes; the message and the first issues say what is wrong where. */
export function readBundle(bytes: Uint8Array | undefined): BundleRead {
	if (!bytes) return { ok: false, status: 413, message: BUNDLE_TOO_LARGE, issues: [] };
	if (bytes.byteLength === 0) return { ok: false, status: 400, message: 'The bundle is empty. Choose the .json file an export produced.', issues: [] };
	let json: unknown;
	try {
		json = JSON.parse(new TextDecoder('utf-8', { fatal: true }).decode(bytes));
	} catch {
		return { ok: false, status: 400, message: 'The file is not JSON, so it is not a Curvelore bundle. Choose the .json file an export produced.', issues: [] };
	}
	const parsed = bundle.safeParse(json);
	if (!parsed.success) {
		const issues = toApiIssues(parsed.error.issues).slice(0, 20);
		const top = parsed.error.issues.find((i) => i.path.length <= 1);
		const message = top ? top.message : `The bundle does not match the format: ${issues.length} problem${issues.length === 1 ? '' : 's'}, the first at ${issues[0]?.path || 'the top'}.`;
		return { ok: false, status: 400, message, issues };
	}
	return { ok: true, bundle: parsed.data };
}
