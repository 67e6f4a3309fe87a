/** Every way the engine can refuse input. Messages are written for technicians. */
export type SignatureErrorCode =
	| 'empty'
	| 'binary'
	| 'not_numeric'
	| 'too_few_samples'
	| 'too_many_samples'
	| 'too_large'
	| 'not_finite'
	| 'ragged'
	| 'flat'
	| 'missing_sense_resistance'
	| 'unknown_format'
	| 'bad_json'
	| 'bad_conditions'
	| 'no_period'
	| 'bad_model'
	| 'no_convergence';

export class SignatureError extends Error {
	readonly code: SignatureErrorCode;
	/** 1-based line of the file the problem is on, when there is one. */
	readonly line?: number;

	constructor(code: SignatureErrorCode, message: string, line?: number) {
		super(line === undefined ? message : `Line ${line}: ${message}`);
		this.name = 'SignatureError';
		this.code = code;
		this.line = line;
	}
}

export function isSignatureError(e: unknown): e is SignatureError {
	return e instanceof SignatureError;
}
