/**
 * The Lockstep demo fab: an invented, deterministic scenario and its wafer-step generator.
 * Pure Node/TypeScript (no database, no Vite aliases): the seed and the ingest pipeline build on it.
 */
export type {
	DemoEpisode,
	DemoFeature,
	DemoMaintenance,
	DemoScenario,
	DemoRealVolume,
	DemoWaferStep,
	EpisodeKind
} from './types';
export {
	buildScenario,
	CLEAN_INTERVAL_WAFERS,
	DEFAULT_DAYS,
	DEFAULT_END,
	DEFAULT_REAL_VOLUME_DAYS,
	DEFAULT_SEED,
	REAL_VOLUME_CLEAN_INTERVAL_RF_HOURS
} from './scenario';
export { OVERHEAD_S, REAL_VOLUME_WAFERS_PER_HOUR, WAFERS_PER_CHAMBER_DAY } from './schedule';
export {
	generateWaferSteps,
	goldenWaferKeys,
	GOLDEN_SAMPLE_EVERY,
	GOLDEN_SAMPLE_EVERY_REAL_VOLUME,
	QUALIFICATION_PER_LOT,
	QUALIFICATION_WAFERS,
	SEASONING_WAFERS
} from './generate';
export { csvHeader, csvLine, formatValue, REQUIRED_COLUMNS, writeWaferSummaryCsv, writeWaferSummaryCsvFile } from './csv';
export { airLeakSccm, heLeakSccm, o2FlowFactor, PART_SWAP_OFFSET, rfMatchWearFraction } from './episodes';
export { EPISODE_CHAMBERS } from './fab';
export { oesChannels, oesName, renderSpectrum, transmission } from './spectrum';
