/**
 * The Lockstep demo fab: an invented, deterministic scenario and its wafer-step generator.
 * Pure Node/TypeScript (no database, no Vite aliases): the seed and the ingest pipeline build on it.
 */
export type {
	DemoEpisode,
	DemoFeature,
	DemoMaintenance,
	DemoScenario,
	DemoWaferStep,
	EpisodeKind
} from './types';
export { buildScenario, CLEAN_INTERVAL_WAFERS, DEFAULT_DAYS, DEFAULT_END, DEFAULT_SEED } from './scenario';
export {
	generateWaferSteps,
	goldenWaferKeys,
	GOLDEN_SAMPLE_EVERY,
	QUALIFICATION_PER_LOT,
	QUALIFICATION_WAFERS,
	SEASONING_WAFERS
} from './generate';
export { csvHeader, csvLine, REQUIRED_COLUMNS, writeWaferSummaryCsv, writeWaferSummaryCsvFile } from './csv';
export { airLeakSccm, heLeakSccm, o2FlowFactor, PART_SWAP_OFFSET, rfMatchWearFraction } from './episodes';
export { EPISODE_CHAMBERS } from './fab';
export { oesChannels, oesName, renderSpectrum, transmission } from './spectrum';
