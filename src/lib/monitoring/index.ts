// Public surface of Lockstep's monitoring engine (pure TypeScript, no I/O). See README.md here.
export { MonitoringInputError } from './errors';
export { fUpper, chiSquareUpper, normalUpper, tTwoSided } from './quantiles';
export {
	assertFiniteRow,
	fitScaling,
	featureResolution,
	scaleRow,
	DEFAULT_SCALE_FLOOR,
	type Row,
	type Scaling,
	type ScalingMethod,
	type ScaleFloor,
	type LowVarianceFeature
} from './scaling';
export { decompose, type Decomposition, type PcaRoute } from './pca';
export { brokenStickComponents } from './components';
export {
	t2Limit,
	qLimit,
	qLimitJacksonMudholkar,
	qLimitBox,
	qLimitThreeMoment,
	residualMoments,
	phiParameters,
	phiLimit,
	cubeRootLaw,
	cubeRootPredictionLimit,
	type CubeRootLaw,
	type QLimitMethod,
	type ResidualMoments,
	type PhiParameters
} from './limits';
export type { BaselineModel, ModelLimits, LimitCalibration, CubeRootSummary } from './model';
export { fitBaseline, fitBaselineDetailed, calibrateLimits, type FitOptions, type DetailedFit } from './baseline';
export {
	crossValidatedScores,
	crossValidatedStatistics,
	defaultFolds,
	type CrossValidatedScores,
	type CrossValidatedStatistics,
	type CrossValidationSpec
} from './cross-validation';
export { scoreWafer, scoreBatch, rowFromRecord, stateRatio, beyondLimit, type WaferScore, type BatchScores } from './scoring';
export {
	contributions,
	rankContributions,
	contributionLimits,
	t2ContributionsUninformative,
	type ContributionLimits,
	type ContributionKind,
	type Contributions,
	type RankedContribution
} from './contributions';
export { modifiedZScores, MODIFIED_Z_THRESHOLD, type ModifiedZ } from './robust';
export { screenGoldenCandidates, SCREENING_METHOD, type ScreeningResult, type ScreenedWafer, type ScreeningOptions } from './golden-screening';
export {
	compareChambers,
	fitFleetReference,
	FLEET_DEFAULTS,
	type FleetReference,
	type ChamberWafers,
	type FleetOptions,
	type FleetComparison,
	type ChamberMatch,
	type SeparatingFeature
} from './fleet';
export { benjaminiHochberg, simesCombined, type FdrResult } from './fdr';
export { referenceStats, type InControl } from './reference';
export { ewma, type EwmaChart, type EwmaOptions } from './ewma';
export { sampleAutocorrelation, bartlettStandardErrors } from './autocorrelation';
export {
	ewmastVarianceFactor,
	ewmaInflation,
	EWMAST_M,
	type EwmaInflation,
	type EwmaInflationOptions
} from './ewma-autocorrelation';
export { runRules, type RunRule, type RunRuleViolation, type RunRuleOptions } from './run-rules';
export { forecastCrossing, type CrossingForecast, type ForecastOptions } from './forecast';
export {
	ACTINOMETRY_RATIOS,
	parseChannelWavelength,
	planActinometry,
	actinometryRatios,
	appendActinometry,
	type ActinometryPlan,
	type ActinometryRatioSpec
} from './actinometry';
export {
	EMISSION_LINES,
	KEY_EMISSION_LINES,
	DEFAULT_MATCH_NM,
	MAX_MATCH_NM,
	channelGrid,
	identifyLines,
	identifyFeature,
	type ChannelGrid,
	type EmissionLine
} from './emission-lines';
export {
	leakSignature,
	waferLeakSignature,
	leakGasOf,
	fleetLeakSignature,
	goldenZ,
	LEAK_ELEMENTS,
	LEAK_RISE_Z,
	LEAK_TOP,
	LEAK_Q_SHARE,
	LEAK_MIN_LINES,
	type LeakGas,
	type LeakEvidence,
	type LeakContributor,
	type LeakSignature
} from './leak-signature';
export { serializeModel, deserializeModel, modelToBlob, modelFromBlob } from './serialize';
export {
	normalTail,
	ratioShape,
	ratioMoments,
	shiftedChiSquare,
	scoreScale,
	ewmaUpperArl,
	ewmaLimitForArl,
	driftChartSd,
	driftChart,
	DRIFT_SCORE_CAP,
	type RatioMoments,
	type ShiftedChiSquare,
	type DriftReference
} from './drift';
export {
	designRules,
	evaluateRules,
	quietPoints,
	runWarningProbability,
	binomialAtLeast,
	BUDGET_SHARES,
	TAIL_MARGIN,
	RULE_LABELS,
	RULE_SEVERITY,
	type AlarmRule,
	type WaferRule,
	type RulePolicy,
	type RuleDesign,
	type RuleBaseline,
	type ScoredPoint,
	type Violation
} from './alarm-rules';
export {
	phaseOne,
	phaseOneT2Limit,
	goldenSetWarnings,
	advisedGoldenWafers,
	type PhaseOneResult,
	type PhaseOneWafer,
	type GoldenSetFacts
} from './phase-one';
