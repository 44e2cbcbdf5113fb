/** Words and badge tones of campaign and draft states, shared by the list and the review page. */
import type { Tone } from '$lib/components/ui';

export const CAMPAIGN_STATE: Record<string, [string, Tone]> = {
	drafting: ['drafting', 'info'],
	review: ['awaiting approval', 'warn'],
	approved: ['approved', 'ok'],
	failed: ['no draft fitted', 'alarm']
};

export const DRAFT_STATE: Record<string, [string, Tone]> = {
	pending: ['queued', 'neutral'],
	working: ['fitting', 'info'],
	drafted: ['draft', 'warn'],
	failed: ['not fitted', 'alarm'],
	approved: ['approved', 'ok'],
	discarded: ['discarded', 'neutral']
};

export const REQUALIFY_STATE: Record<string, [string, Tone]> = {
	approved: ['baseline approved', 'ok'],
	proposed: ['draft proposed', 'warn'],
	waiting: ['waiting for wafers', 'neutral'],
	manual: ['pick golden wafers', 'info'],
	failed: ['proposal not fitted', 'alarm']
};
