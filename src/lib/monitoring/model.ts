import type { PcaRoute } from './pca';
import type { PhiParameters, QLimitMethod, ResidualMoments } from './limits';
import type { LowVarianceFeature, ScaleFloor, ScalingMethod } from './scaling';

/** Control limits of a model at its α and at its warning α. */
export interface ModelLimits {
	t2: number;
	q: number;
	phi: number;
	t2Warning: number;
	qWarning: number;
	phiWarning: number;
	/**
	 * T² and Q limits at α/2 (Bonferroni) that decide the wafer's combined state, so that an in-control
	 * wafer's state is beyond limit with probability ≤ α. Absent on models stored before them (their
	 * state is beyond limit when any of T², Q, φ exceeds its α limit, as it always was).
	 */
	t2State?: number;
	qState?: number;
}

/** The cube-root law of one cross-validated statistic (see cubeRootLaw in limits.ts). */
export interface CubeRootSummary {
	mean: number;
	sd: number;
	n: number;
	nu: number;
}

/** How a cross-validated model's limits were calibrated. */
export interface LimitCalibration {
	folds: number;
	/**
	 * T²: mean of the cross-validated T², the mean of the F law of a new wafer
	 * (k(n−1)(n+1)/(n(n−k−2))), and the factor min(1, their ratio) applied to the F limits.
	 */
	t2: { cvMean: number; theoryMean: number; factor: number };
	/** Q: its cube-root law, and (n > p) the factor scaling the residual-eigenvalue law to the out-of-sample mean. */
	q: CubeRootSummary & { shapeScale: number | null };
	phi: CubeRootSummary;
}

/**
 * A fitted PCA baseline for one chamber × recipe × step. Plain data: it serializes to JSON
 * ({@link serializeModel}) and to a binary blob ({@link modelToBlob}) without loss.
 */
export interface BaselineModel {
	format: 'lockstep-pca-baseline';
	version: 1;
	featureNames: string[];
	/** Golden rows used. */
	n: number;
	/** Features. */
	p: number;
	/** Retained components. */
	k: number;
	/** How k was chosen. */
	componentsRule: 'fixed' | 'broken-stick';
	scaling: ScalingMethod;
	/** Golden mean of each feature. */
	mean: Float64Array;
	/** Golden standard deviation (n − 1) of each feature, before any floor. */
	sd: Float64Array;
	/** Divisor applied to each centred feature (after the near-zero floor). */
	scale: Float64Array;
	/** The near-zero-variance floor in force. */
	scaleFloor: ScaleFloor;
	/** Features whose golden variance was (near) zero and how they were treated. */
	lowVarianceFeatures: LowVarianceFeature[];
	/** Loadings P, p × k, flat row-major: entry (feature j, component a) at j·k + a. */
	loadings: Float64Array;
	/** All non-zero eigenvalues of the scaled golden covariance, largest first (length r). */
	eigenvalues: Float64Array;
	/** λ_a / Σλ for every non-zero eigenvalue. */
	explainedVariance: Float64Array;
	/** Which decomposition produced the model. */
	route: PcaRoute;
	alpha: number;
	warningAlpha: number;
	qMethod: QLimitMethod;
	residual: ResidualMoments;
	phi: PhiParameters;
	limits: ModelLimits;
	/** `cross-validated` or `theory`; absent on models stored before (theory limits, old state rule). */
	limitCalibration?: 'cross-validated' | 'theory';
	/** In words: how each limit was set, with sources. Absent on models stored before. */
	limitMethod?: string;
	/** The laws matched to the cross-validated golden statistics (cross-validated models only). */
	crossValidation?: LimitCalibration;
}
