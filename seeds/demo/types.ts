/** The demo fab as data: who, what, where and what went wrong, without a single wafer. */
export interface DemoScenario {
	/** Master seed the scenario was built with; `generateWaferSteps` uses it unless told otherwise. */
	seed: number;
	fab: { code: string; name: string; site: string; timeZone: string };
	areas: { code: string; name: string }[];
	tools: { code: string; name: string; areaCode: string; model: string }[];
	/** `code` is unique fab-wide and is the `chamber_id` of the wafer-summary files. */
	chambers: { code: string; toolCode: string; name: string; recipes: string[] }[];
	recipes: { code: string; name: string; chemistry: string; steps: { name: string; durationS: number }[] }[];
	/** Feature catalog per recipe code, then step name; wafer values are aligned with it. */
	features: Record<string, Record<string, DemoFeature[]>>;
	people: { username: string; displayName: string; role: 'viewer' | 'engineer' | 'admin' }[];
	/** Sorted by time; includes each chamber's last wet clean before `start` (RF-hours start there). */
	maintenance: DemoMaintenance[];
	episodes: DemoEpisode[];
	start: Date;
	end: Date;
	/**
	 * The real-volume tail: from `from` to `end` every chamber runs at a real chamber's pace
	 * (`wafersPerHour`) and is wet-cleaned by a real PM interval in RF-hours; null when the whole
	 * window runs at the compressed, low-volume pace (the small variant the e2e suite seeds).
	 */
	realVolume: DemoRealVolume | null;
	/** Each chamber's wet-clean interval (RF seconds of its PM counter) in the compressed weeks and at real volume. */
	pmIntervals: Record<string, { compressedRfS: number; realVolumeRfS: number | null }>;
}

export interface DemoRealVolume {
	from: Date;
	/** Lot arrivals are planned for this many wafers per chamber and hour. */
	wafersPerHour: number;
	/** Range of the chambers' wet-clean intervals at real volume, RF-hours. */
	cleanIntervalRfHours: readonly [number, number];
}

export interface DemoFeature {
	name: string;
	kind: 'oes' | 'sensor';
	wavelengthNm: number | null;
	unit: string;
}

export interface DemoMaintenance {
	chamberCode: string;
	kind: 'wet_clean' | 'part_swap' | 'pm';
	at: Date;
	byUsername: string;
	comment: string;
}

export type EpisodeKind =
	'o2_mfc_drift' | 'air_leak' | 'he_backside_leak' | 'part_swap_offset' | 'rf_match_wear';

export interface DemoEpisode {
	id: string;
	chamberCode: string;
	kind: EpisodeKind | string;
	start: Date;
	/** null: still going at the end of the demo. */
	end: Date | null;
	title: string;
	whatToLookFor: string;
}

/** One wafer × recipe step, as the tool host would summarise it. */
export interface DemoWaferStep {
	waferId: string;
	lotId: string;
	slot: number;
	chamberCode: string;
	recipe: string;
	step: string;
	/** Start of the step, whole seconds, UTC. */
	processedAt: Date;
	/** Qualified as golden by the demo's story (not a CSV column; Lockstep decides golden status). */
	golden: boolean;
	/** Aligned with `scenario.features[recipe][step]`. */
	values: Float64Array;
}
