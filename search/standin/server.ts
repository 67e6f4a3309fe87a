/**
 * The stand-in's HTTP face: the subset of the search engine's REST API the official client calls,
 * on node:http. Every error answers `{message, code, type, link}` so the client raises its usual
 * MeilisearchApiError; every write answers 202 with an enqueued task.
 */
import { createServer, type IncomingMessage, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { FilterError, parseFilter } from './filter';
import { ApiError, defaultSettings, kebabToSetting, StandinEngine, validateSettingsPatch, type Settings } from './engine';

const MAX_BODY_BYTES = 100 * 1024 * 1024;
const INDEX_UID = /^[A-Za-z0-9_-]{1,400}$/;

export interface StandinOptions {
	/** 0 (default) picks a free port. */
	port?: number;
	host?: string;
	/** When set, every route but /health requires `Authorization: Bearer <masterKey>`. */
	masterKey?: string;
}

export interface Standin {
	url: string;
	port: number;
	engine: StandinEngine;
	close(): Promise<void>;
}

async function readBody(req: IncomingMessage): Promise<unknown> {
	const chunks: Buffer[] = [];
	let size = 0;
	for await (const chunk of req) {
		size += (chunk as Buffer).length;
		if (size > MAX_BODY_BYTES) throw new ApiError(413, 'payload_too_large', 'The provided payload reached the size limit of 100 MiB.');
		chunks.push(chunk as Buffer);
	}
	const text = Buffer.concat(chunks).toString('utf8');
	if (text.trim() === '') return undefined;
	const type = req.headers['content-type'] ?? 'application/json';
	if (!/^application\/json\b/i.test(type)) {
		throw new ApiError(415, 'invalid_content_type', `The Content-Type \`${type}\` is not supported by the local search stand-in: send application/json.`);
	}
	try {
		return JSON.parse(text);
	} catch (e) {
		throw new ApiError(400, 'malformed_payload', `The JSON payload provided is malformed. \`${e instanceof Error ? e.message : e}\`.`);
	}
}

function send(res: ServerResponse, status: number, body: unknown): void {
	const text = body === undefined ? '' : JSON.stringify(body);
	res.writeHead(status, { 'content-type': 'application/json', 'content-length': Buffer.byteLength(text) });
	res.end(text);
}

function checkAuth(req: IncomingMessage, masterKey: string | undefined): void {
	if (!masterKey) return;
	const header = req.headers.authorization;
	if (!header) throw new ApiError(401, 'missing_authorization_header', 'The Authorization header is missing. It must use the bearer authorization method.', 'auth');
	const m = /^Bearer\s+(.+)$/i.exec(header);
	if (!m || m[1] !== masterKey) throw new ApiError(403, 'invalid_api_key', 'The provided API key is invalid.', 'auth');
}

function checkIndexUid(uid: string): void {
	if (!INDEX_UID.test(uid)) {
		throw new ApiError(400, 'invalid_index_uid', `\`${uid}\` is not a valid index uid. Index uid can be an integer or a string containing only alphanumeric characters, hyphens (-) and underscores (_), and can not be more than 400 bytes.`);
	}
}

const intParam = (url: URL, name: string, fallback: number): number => {
	const raw = url.searchParams.get(name);
	if (raw === null) return fallback;
	const n = Number(raw);
	if (!Number.isInteger(n) || n < 0) throw new ApiError(400, `invalid_document_${name}`, `Invalid value in parameter \`${name}\`: expected a positive integer.`);
	return n;
};

const fieldsParam = (url: URL): string[] | undefined => url.searchParams.get('fields')?.split(',').map((s) => s.trim()).filter(Boolean);

function documentsBody(body: unknown): Record<string, unknown>[] {
	const docs = Array.isArray(body) ? body : body && typeof body === 'object' ? [body] : null;
	if (!docs || !docs.every((d) => d && typeof d === 'object' && !Array.isArray(d))) {
		throw new ApiError(400, 'malformed_payload', 'The payload must be a JSON array of documents (objects).');
	}
	return docs as Record<string, unknown>[];
}

/** Routes one request; returns [status, body]. */
async function route(engine: StandinEngine, req: IncomingMessage, url: URL, masterKey: string | undefined): Promise<[number, unknown]> {
	const method = req.method ?? 'GET';
	const parts = url.pathname.split('/').filter(Boolean).map(decodeURIComponent);

	if (parts[0] === 'health' && parts.length === 1 && method === 'GET') return [200, { status: 'available' }];
	checkAuth(req, masterKey);
	const body = await readBody(req);

	if (parts[0] === 'version' && parts.length === 1 && method === 'GET') {
		return [200, { commitSha: 'local-standin', commitDate: 'unknown', pkgVersion: 'local-standin' }];
	}

	if (parts[0] === 'tasks' && parts.length === 2 && method === 'GET') {
		const uid = Number(parts[1]);
		if (!Number.isInteger(uid) || uid < 0) throw new ApiError(400, 'invalid_task_uids', `Invalid task uid \`${parts[1]}\`.`);
		return [200, engine.getTask(uid)];
	}

	if (parts[0] !== 'indexes') throw new ApiError(404, 'not_found', `No route for ${method} ${url.pathname} in the local search stand-in.`);

	if (parts.length === 1) {
		if (method === 'GET') {
			const offset = intParam(url, 'offset', 0);
			const limit = intParam(url, 'limit', 20);
			const all = [...engine.indexes.values()].sort((a, b) => (a.uid < b.uid ? -1 : 1));
			return [200, { results: all.slice(offset, offset + limit).map(indexInfo), offset, limit, total: all.length }];
		}
		if (method === 'POST') {
			const { uid, primaryKey = null } = (body ?? {}) as { uid?: unknown; primaryKey?: string | null };
			if (typeof uid !== 'string') throw new ApiError(400, 'missing_index_uid', 'Missing field `uid`.');
			checkIndexUid(uid);
			return [202, engine.enqueue(uid, 'indexCreation', { primaryKey }, () => {
				if (engine.indexes.has(uid)) throw new ApiError(409, 'index_already_exists', `Index \`${uid}\` already exists.`);
				engine.indexForWrite(uid, primaryKey);
				return { primaryKey };
			})];
		}
	}

	const uid = parts[1];
	checkIndexUid(uid);

	if (parts.length === 2) {
		if (method === 'GET') return [200, indexInfo(engine.index(uid))];
		if (method === 'DELETE') {
			return [202, engine.enqueue(uid, 'indexDeletion', {}, () => {
				const index = engine.index(uid);
				engine.indexes.delete(uid);
				return { deletedDocuments: index.docs.size };
			})];
		}
	}

	if (parts[2] === 'stats' && parts.length === 3 && method === 'GET') {
		const index = engine.index(uid);
		const fieldDistribution: Record<string, number> = {};
		for (const { doc } of index.docs.values()) for (const k of Object.keys(doc)) fieldDistribution[k] = (fieldDistribution[k] ?? 0) + 1;
		return [200, { numberOfDocuments: index.docs.size, isIndexing: false, fieldDistribution }];
	}

	if (parts[2] === 'settings') {
		if (parts.length === 3) {
			if (method === 'GET') return [200, engine.index(uid).settings];
			if (method === 'PATCH') {
				const patch = validateSettingsPatch(body);
				return [202, engine.enqueue(uid, 'settingsUpdate', patch, () => {
					engine.indexForWrite(uid, null).applySettings(patch);
				})];
			}
			if (method === 'DELETE') {
				return [202, engine.enqueue(uid, 'settingsUpdate', {}, () => {
					engine.indexForWrite(uid, null).applySettings(defaultSettings());
				})];
			}
		}
		if (parts.length === 4) {
			const name = kebabToSetting(parts[3]);
			if (!name) throw new ApiError(404, 'feature_not_supported', `The setting \`${parts[3]}\` is not supported by the local search stand-in (see search/README.md).`);
			if (method === 'GET') return [200, engine.index(uid).settings[name]];
			if (method === 'PUT' || method === 'PATCH' || method === 'DELETE') {
				const patch = validateSettingsPatch({ [name]: method === 'DELETE' ? null : (body ?? null) }) as Partial<Settings>;
				return [202, engine.enqueue(uid, 'settingsUpdate', patch, () => {
					engine.indexForWrite(uid, null).applySettings(patch);
				})];
			}
		}
	}

	if (parts[2] === 'search' && parts.length === 3 && method === 'POST') return [200, engine.index(uid).search(body ?? {})];

	if (parts[2] === 'documents') {
		if (parts.length === 3) {
			if (method === 'GET') {
				return [200, engine.index(uid).listDocuments(intParam(url, 'offset', 0), intParam(url, 'limit', 20), fieldsParam(url))];
			}
			if (method === 'POST' || method === 'PUT') {
				const docs = documentsBody(body);
				const primaryKey = url.searchParams.get('primaryKey');
				return [202, engine.enqueue(uid, 'documentAdditionOrUpdate', { receivedDocuments: docs.length, indexedDocuments: null }, () =>
					engine.indexForWrite(uid, primaryKey).putDocuments(docs, method === 'PUT', primaryKey)
				)];
			}
			if (method === 'DELETE') {
				return [202, engine.enqueue(uid, 'documentDeletion', { deletedDocuments: null }, () => ({ deletedDocuments: engine.index(uid).deleteAll() }))];
			}
		}
		if (parts.length === 4 && parts[3] === 'delete' && method === 'POST') {
			const filterValue = (body as { filter?: unknown } | undefined)?.filter;
			if (filterValue === undefined) throw new ApiError(400, 'missing_document_filter', 'Missing field `filter`.');
			let node;
			try {
				node = parseFilter(filterValue);
			} catch (e) {
				if (e instanceof FilterError) throw new ApiError(400, 'invalid_document_filter', e.message);
				throw e;
			}
			return [202, engine.enqueue(uid, 'documentDeletion', { providedIds: 0, originalFilter: JSON.stringify(filterValue), deletedDocuments: null }, () => ({
				deletedDocuments: engine.index(uid).deleteByFilter(node)
			}))];
		}
		if (parts.length === 4 && parts[3] === 'delete-batch' && method === 'POST') {
			if (!Array.isArray(body) || !body.every((id) => typeof id === 'string' || typeof id === 'number')) {
				throw new ApiError(400, 'bad_request', 'The payload must be a JSON array of document ids.');
			}
			const ids = body.map(String);
			return [202, engine.enqueue(uid, 'documentDeletion', { providedIds: ids.length, deletedDocuments: null }, () => ({
				deletedDocuments: engine.index(uid).deleteIds(ids)
			}))];
		}
		if (parts.length === 4) {
			const id = parts[3];
			if (method === 'GET') return [200, engine.index(uid).getDocument(id, fieldsParam(url))];
			if (method === 'DELETE') {
				return [202, engine.enqueue(uid, 'documentDeletion', { providedIds: 1, deletedDocuments: null }, () => ({
					deletedDocuments: engine.index(uid).deleteIds([id])
				}))];
			}
		}
	}

	throw new ApiError(404, 'not_found', `${method} ${url.pathname} is not supported by the local search stand-in (see search/README.md).`);
}

function indexInfo(index: { uid: string; primaryKey: string | null; createdAt: string; updatedAt: string }) {
	return { uid: index.uid, primaryKey: index.primaryKey, createdAt: index.createdAt, updatedAt: index.updatedAt };
}

/** Starts the stand-in; resolves once it listens. `close()` stops it and forgets everything. */
export function startStandin(options: StandinOptions = {}): Promise<Standin> {
	const engine = new StandinEngine();
	const host = options.host ?? '127.0.0.1';
	const server = createServer((req, res) => {
		const url = new URL(req.url ?? '/', `http://${host}`);
		route(engine, req, url, options.masterKey).then(
			([status, body]) => send(res, status, body),
			(e: unknown) => {
				if (e instanceof ApiError) return send(res, e.status, e.toJSON());
				console.error('search stand-in error:', e);
				send(res, 500, new ApiError(500, 'internal', 'The local search stand-in failed on this request (see its log).', 'internal').toJSON());
			}
		);
	});
	// Keep-alive sockets would hold close() open for their idle timeout.
	server.keepAliveTimeout = 1000;
	return new Promise((resolve, reject) => {
		server.once('error', reject);
		server.listen(options.port ?? 0, host, () => {
			server.off('error', reject);
			const port = (server.address() as AddressInfo).port;
			resolve({
				url: `http://${host}:${port}`,
				port,
				engine,
				close: () =>
					new Promise<void>((done, fail) => {
						server.close((err) => (err ? fail(err) : done()));
						server.closeAllConnections();
					})
			});
		});
	});
}
