import type { Analysis, TestConditions } from '../signature/types';

/** A stored trace as the API sends it (`traceJson` on the server). */
export interface TraceSummary {
	id: string;
	entryId: string | null;
	role: string;
	label: string;
	conditions: TestConditions;
	senseOhm: number | null;
	simulated: boolean;
	file: { name: string; format: string | null; bytes: number | null } | null;
	samples: number;
	periods: number;
	class: string;
	residual: number;
	analysis: Analysis;
	warnings: string[];
	createdAt: string;
}

export const TRACE_ROLE_NAMES: Readonly<Record<string, string>> = {
	fault: 'Fault',
	'known-good': 'Known-good',
	other: 'Other',
	query: 'Query capture'
};
