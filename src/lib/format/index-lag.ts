/**
 * The admin's one-line search index status, from `indexLag`: "Search index: up to date", or
 * "12 changes waiting, oldest 3 min". Pure, so the page and its tests share it.
 */
export interface IndexLagSummary {
	pending: number;
	failing: number;
	lagSeconds: number;
}

function age(seconds: number): string {
	if (seconds < 60) return `${Math.max(1, Math.round(seconds))} s`;
	if (seconds < 3600) return `${Math.round(seconds / 60)} min`;
	if (seconds < 86_400) return `${Math.round(seconds / 3600)} h`;
	return `${Math.round(seconds / 86_400)} d`;
}

export function describeIndexLag(lag: IndexLagSummary): { text: string; healthy: boolean } {
	if (lag.pending === 0) return { text: 'Search index: up to date', healthy: true };
	const waiting = `${lag.pending} ${lag.pending === 1 ? 'change' : 'changes'} waiting, oldest ${age(lag.lagSeconds)}`;
	if (lag.failing > 0) {
		return { text: `Search index: ${waiting}. The search service is not taking them yet; they are kept and retried.`, healthy: false };
	}
	return { text: `Search index: ${waiting}`, healthy: lag.lagSeconds < 120 };
}
