/**
 * The engine's filter language, parsed into a tree and evaluated against documents. Supported:
 * `attr = v`, `!=`, `>`, `>=`, `<`, `<=`, `attr a TO b`, `attr IN [..]`, `attr NOT IN [..]`,
 * `attr EXISTS`, `attr NOT EXISTS`, `AND`, `OR`, `NOT`, parentheses, and the array form (outer
 * array = AND, inner array = OR). Anything else raises a FilterError; the caller turns it into the
 * engine's `invalid_search_filter` (or `invalid_document_filter`) response. Nothing is ignored.
 */

export class FilterError extends Error {
	override name = 'FilterError';
}

export type FilterNode =
	| { kind: 'and' | 'or'; children: FilterNode[] }
	| { kind: 'not'; child: FilterNode }
	| { kind: 'cmp'; attr: string; op: '=' | '!=' | '>' | '>=' | '<' | '<='; value: string }
	| { kind: 'range'; attr: string; from: string; to: string }
	| { kind: 'in'; attr: string; values: string[] }
	| { kind: 'exists'; attr: string }
	| { kind: 'true' };

type Token = { type: 'word' | 'string' | 'op' | 'punct'; text: string; pos: number };

const KEYWORDS = new Set(['AND', 'OR', 'NOT', 'IN', 'TO', 'EXISTS']);
// Operators the engine has that the stand-in does not evaluate: refused by name, never ignored.
const REFUSED = new Set(['CONTAINS', 'STARTS', 'IS', '_GEORADIUS', '_GEOBOUNDINGBOX', '_GEOPOLYGON']);

function tokenize(input: string): Token[] {
	const tokens: Token[] = [];
	let i = 0;
	while (i < input.length) {
		const c = input[i];
		if (/\s/.test(c)) {
			i++;
			continue;
		}
		if (c === '"' || c === "'") {
			let j = i + 1;
			let text = '';
			while (j < input.length && input[j] !== c) {
				if (input[j] === '\\' && j + 1 < input.length) j++;
				text += input[j];
				j++;
			}
			if (j >= input.length) throw new FilterError(`Unclosed quote at position ${i + 1} in the filter.`);
			tokens.push({ type: 'string', text, pos: i });
			i = j + 1;
			continue;
		}
		const two = input.slice(i, i + 2);
		if (two === '!=' || two === '>=' || two === '<=') {
			tokens.push({ type: 'op', text: two, pos: i });
			i += 2;
			continue;
		}
		if (c === '=' || c === '>' || c === '<') {
			tokens.push({ type: 'op', text: c, pos: i });
			i++;
			continue;
		}
		if (c === '(' || c === ')' || c === '[' || c === ']' || c === ',') {
			tokens.push({ type: 'punct', text: c, pos: i });
			i++;
			continue;
		}
		let j = i;
		while (j < input.length && !/[\s"'=!<>()[\],]/.test(input[j])) j++;
		if (j === i) throw new FilterError(`Unexpected character \`${c}\` at position ${i + 1} in the filter.`);
		tokens.push({ type: 'word', text: input.slice(i, j), pos: i });
		i = j;
	}
	return tokens;
}

class Parser {
	private i = 0;
	constructor(
		private readonly tokens: Token[],
		private readonly source: string
	) {}

	parse(): FilterNode {
		if (this.tokens.length === 0) return { kind: 'true' };
		const node = this.or();
		const rest = this.peek();
		if (rest) throw this.error(`Unexpected \`${rest.text}\``, rest);
		return node;
	}

	private peek(offset = 0): Token | undefined {
		return this.tokens[this.i + offset];
	}
	private isKeyword(t: Token | undefined, word: string): boolean {
		return t?.type === 'word' && t.text.toUpperCase() === word;
	}
	private error(message: string, at?: Token): FilterError {
		const where = at ? ` at position ${at.pos + 1}` : ' at the end';
		return new FilterError(`${message}${where} of the filter \`${this.source}\`.`);
	}

	private or(): FilterNode {
		const children = [this.and()];
		while (this.isKeyword(this.peek(), 'OR')) {
			this.i++;
			children.push(this.and());
		}
		return children.length === 1 ? children[0] : { kind: 'or', children };
	}

	private and(): FilterNode {
		const children = [this.not()];
		while (this.isKeyword(this.peek(), 'AND')) {
			this.i++;
			children.push(this.not());
		}
		return children.length === 1 ? children[0] : { kind: 'and', children };
	}

	private not(): FilterNode {
		if (this.isKeyword(this.peek(), 'NOT')) {
			this.i++;
			return { kind: 'not', child: this.not() };
		}
		return this.primary();
	}

	private primary(): FilterNode {
		const t = this.peek();
		if (!t) throw this.error('Expected a condition');
		if (t.type === 'punct' && t.text === '(') {
			this.i++;
			const inner = this.or();
			const close = this.peek();
			if (!(close?.type === 'punct' && close.text === ')')) throw this.error('Expected `)`', close);
			this.i++;
			return inner;
		}
		return this.condition();
	}

	private value(): string {
		const t = this.peek();
		if (!t || (t.type !== 'word' && t.type !== 'string')) throw this.error('Expected a value', t);
		if (t.type === 'word' && KEYWORDS.has(t.text.toUpperCase())) throw this.error(`Expected a value, found \`${t.text}\``, t);
		this.i++;
		return t.text;
	}

	private condition(): FilterNode {
		const attrToken = this.peek();
		if (!attrToken || (attrToken.type !== 'word' && attrToken.type !== 'string')) {
			throw this.error('Expected an attribute name', attrToken);
		}
		if (attrToken.type === 'word' && REFUSED.has(attrToken.text.replace(/\(.*$/, '').toUpperCase())) {
			throw this.error(`\`${attrToken.text}\` is not supported by this search service`, attrToken);
		}
		this.i++;
		const attr = attrToken.text;
		const t = this.peek();
		if (t?.type === 'op') {
			this.i++;
			return { kind: 'cmp', attr, op: t.text as '=', value: this.value() };
		}
		if (t?.type === 'word') {
			const word = t.text.toUpperCase();
			if (REFUSED.has(word)) throw this.error(`The operator \`${t.text}\` is not supported by this search service`, t);
			if (word === 'EXISTS') {
				this.i++;
				return { kind: 'exists', attr };
			}
			if (word === 'IN') {
				this.i++;
				return { kind: 'in', attr, values: this.list() };
			}
			if (word === 'NOT') {
				const next = this.peek(1);
				if (this.isKeyword(next, 'IN')) {
					this.i += 2;
					return { kind: 'not', child: { kind: 'in', attr, values: this.list() } };
				}
				if (this.isKeyword(next, 'EXISTS')) {
					this.i += 2;
					return { kind: 'not', child: { kind: 'exists', attr } };
				}
				throw this.error('Expected `IN` or `EXISTS` after `NOT`', next);
			}
			if (!KEYWORDS.has(word)) {
				// `attr from TO to`
				const from = this.value();
				if (!this.isKeyword(this.peek(), 'TO')) throw this.error('Expected an operator (=, !=, >, >=, <, <=, IN, TO, EXISTS)', t);
				this.i++;
				return { kind: 'range', attr, from, to: this.value() };
			}
		}
		if (t?.type === 'string') {
			const from = this.value();
			if (!this.isKeyword(this.peek(), 'TO')) throw this.error('Expected `TO`', this.peek());
			this.i++;
			return { kind: 'range', attr, from, to: this.value() };
		}
		throw this.error('Expected an operator (=, !=, >, >=, <, <=, IN, TO, EXISTS)', t);
	}

	private list(): string[] {
		const open = this.peek();
		if (!(open?.type === 'punct' && open.text === '[')) throw this.error('Expected `[`', open);
		this.i++;
		const values: string[] = [];
		for (;;) {
			const t = this.peek();
			if (t?.type === 'punct' && t.text === ']') {
				this.i++;
				return values;
			}
			values.push(this.value());
			const sep = this.peek();
			if (sep?.type === 'punct' && sep.text === ',') {
				this.i++;
				continue;
			}
			if (!(sep?.type === 'punct' && sep.text === ']')) throw this.error('Expected `,` or `]`', sep);
		}
	}
}

export function parseFilterString(input: string): FilterNode {
	return new Parser(tokenize(input), input).parse();
}

/** A request's `filter`: a string, or an array (AND) whose items are strings or arrays of strings (OR). */
export function parseFilter(filter: unknown): FilterNode {
	if (filter === undefined || filter === null) return { kind: 'true' };
	if (typeof filter === 'string') return parseFilterString(filter);
	if (Array.isArray(filter)) {
		const children = filter.map((item): FilterNode => {
			if (typeof item === 'string') return parseFilterString(item);
			if (Array.isArray(item)) {
				return {
					kind: 'or',
					children: item.map((inner) => {
						if (typeof inner !== 'string') throw new FilterError('Invalid filter: nested arrays may hold only strings.');
						return parseFilterString(inner);
					})
				};
			}
			throw new FilterError('Invalid filter: expected a string or an array of strings or arrays of strings.');
		});
		return { kind: 'and', children };
	}
	throw new FilterError('Invalid filter: expected a string or an array of strings or arrays of strings.');
}

/** Every attribute a filter names, to check them against the filterable attributes. */
export function filterAttributes(node: FilterNode, out: Set<string> = new Set()): Set<string> {
	switch (node.kind) {
		case 'and':
		case 'or':
			for (const c of node.children) filterAttributes(c, out);
			break;
		case 'not':
			filterAttributes(node.child, out);
			break;
		case 'true':
			break;
		default:
			out.add(node.attr);
	}
	return out;
}

/** Reads a (possibly dotted) attribute; arrays yield each element. */
function valuesOf(doc: Record<string, unknown>, attr: string): unknown[] | undefined {
	let value: unknown = doc;
	for (const part of attr.split('.')) {
		if (value === null || typeof value !== 'object') return undefined;
		value = (value as Record<string, unknown>)[part];
	}
	if (value === undefined) return undefined;
	return Array.isArray(value) ? value : [value];
}

const asNumber = (s: string): number | undefined => {
	if (s.trim() === '') return undefined;
	const n = Number(s);
	return Number.isFinite(n) ? n : undefined;
};

/** The engine compares filter strings case-insensitively and accent-insensitively. */
export function normaliseFilterValue(s: string): string {
	return /^[\x00-\x7f]*$/.test(s) ? s.toLowerCase() : s.normalize('NFKD').replace(/\p{M}/gu, '').toLowerCase();
}

function equals(docValue: unknown, filterValue: string): boolean {
	if (typeof docValue === 'number') {
		const n = asNumber(filterValue);
		return n !== undefined && n === docValue;
	}
	if (typeof docValue === 'string') return normaliseFilterValue(docValue) === normaliseFilterValue(filterValue);
	if (typeof docValue === 'boolean') return String(docValue) === filterValue.toLowerCase();
	return false;
}

function compare(docValue: unknown, op: string, filterValue: string): boolean {
	const n = asNumber(filterValue);
	if (typeof docValue !== 'number' || n === undefined) return false;
	switch (op) {
		case '>':
			return docValue > n;
		case '>=':
			return docValue >= n;
		case '<':
			return docValue < n;
		case '<=':
			return docValue <= n;
	}
	return false;
}

export function matchesFilter(node: FilterNode, doc: Record<string, unknown>): boolean {
	switch (node.kind) {
		case 'true':
			return true;
		case 'and':
			return node.children.every((c) => matchesFilter(c, doc));
		case 'or':
			return node.children.some((c) => matchesFilter(c, doc));
		case 'not':
			return !matchesFilter(node.child, doc);
		case 'exists':
			return valuesOf(doc, node.attr) !== undefined;
		case 'in': {
			const values = valuesOf(doc, node.attr) ?? [];
			return values.some((v) => node.values.some((f) => equals(v, f)));
		}
		case 'range': {
			const values = valuesOf(doc, node.attr) ?? [];
			return values.some((v) => compare(v, '>=', node.from) && compare(v, '<=', node.to));
		}
		case 'cmp': {
			const values = valuesOf(doc, node.attr) ?? [];
			if (node.op === '=') return values.some((v) => equals(v, node.value));
			// The engine's `!=` is the negation of `=`: documents without the attribute match it.
			if (node.op === '!=') return !values.some((v) => equals(v, node.value));
			return values.some((v) => compare(v, node.op, node.value));
		}
	}
}
