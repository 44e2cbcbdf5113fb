/**
 * The row-by-row half of the pipeline, shared by CSV and JSON input: validate each row, turn it into a
 * packed vector, write accepted rows in batches and score each batch — all inside the file's
 * transaction (see pipeline.ts). `row()` is synchronous on the common path and returns a promise only
 * when it must wait (first sight of a chamber or recipe step, a full batch).
 */
import type { Knex } from 'knex';
import { scoreWaferSteps, type NewWaferStep } from '../scoring.ts';
import { analyseHeader, type Header } from './columns.ts';
import { resolveStepPlan, registerChamber, type Created, type StepPlan } from './catalog.ts';
import { clip } from './errors.ts';
import { BATCH_ROWS, ID_MAX, INSERT_ROWS, MAX_ERRORS_PER_ROW, REPORT_DUPLICATE_CAP, REPORT_REJECTION_CAP } from './limits.ts';
import type { DuplicateRow, Rejection } from './report.ts';
import { parseId, parseInstant, parseNumberCell, parseRfOn, parseSlot } from './values.ts';
import { encodeValues } from '../feature-values.ts';
import { recordProposal } from './feature-sets.ts';

export interface WriterOptions {
	fileId: number;
	registerUnknownChambers: boolean;
	futureToleranceMs: number;
	/** the instant the file was received (the future check's "now") */
	receivedAt: number;
	/** what the first lines are called in messages: "line" for CSV, "row" for JSON */
	unit: 'line' | 'row';
}

interface Pending {
	line: number;
	waferId: string;
	lotId: string;
	recipe: string;
	step: string;
	chamberId: number;
	plan: StepPlan;
	processedAt: number;
	slot: number | null;
	rfOn: number | null;
	values: Float64Array;
}

export interface WriterStats {
	rows: { total: number; accepted: number; rejected: number; duplicate: number };
	waferSteps: { scored: number; noBaseline: number };
	alarmsOpened: number[];
	created: Created;
	rejections: Rejection[];
	rejectionsTotal: number;
	duplicates: DuplicateRow[];
}

export class FileWriter {
	header: Header | null = null;
	/** recipe steps that received at least one stored wafer-step from this file */
	private readonly storedSteps = new Set<number>();
	readonly stats: WriterStats = {
		rows: { total: 0, accepted: 0, rejected: 0, duplicate: 0 },
		waferSteps: { scored: 0, noBaseline: 0 },
		alarmsOpened: [],
		created: { recipes: [], recipeSteps: [], chambers: [] },
		rejections: [],
		rejectionsTotal: 0,
		duplicates: []
	};
	private batch: Pending[] = [];
	private rejectionRows: Array<Record<string, unknown>> = [];
	private readonly seen = new Map<string, number>();
	private readonly chambers = new Map<string, number | null>();
	/** chambers an admin retired (fab structure): their rows are refused, their history kept */
	private readonly retired = new Set<string>();
	private readonly plans = new Map<string, StepPlan>();
	/** rows refused because their step's feature set differs, per plan: each becomes a proposal */
	private readonly refusedForSet = new Map<StepPlan, number>();
	private readonly latestAllowed: number;

	constructor(
		private readonly trx: Knex.Transaction,
		private readonly opts: WriterOptions
	) {
		this.latestAllowed = opts.receivedAt + opts.futureToleranceMs;
	}

	setHeader(fields: string[]): void {
		this.header = analyseHeader(fields);
	}

	/** Reject a row as a whole (wrong field count, broken quotes). */
	rejectRow(line: number, reason: string, value: string | null = null): Promise<void> | undefined {
		this.stats.rows.total++;
		this.stats.rows.rejected++;
		this.addRejection({ line, column: null, value: value === null ? null : clip(value), reason });
		return this.maybeFlushRejections();
	}

	/** Validate one data row and queue it; returns a promise only when the caller must wait. */
	row(fields: string[], line: number): Promise<void> | undefined {
		const h = this.header!;
		if (fields.length !== h.names.length) {
			return this.rejectRow(
				line,
				`The ${this.opts.unit} has ${fields.length} field${fields.length === 1 ? '' : 's'}; the header has ${h.names.length}.`,
				fields.join(',')
			);
		}
		const r = h.required;
		const chamberCode = fields[r.chamber_id].trim();
		const recipe = fields[r.recipe].trim();
		const step = fields[r.step].trim();
		const planKey = `${recipe}\u0000${step}`;
		const chamberKnown = this.chambers.has(chamberCode);
		const planKnown = this.plans.has(planKey);
		if ((!chamberKnown && chamberCode) || (!planKnown && recipe && step)) return this.rowAfterLookup(fields, line, chamberCode, recipe, step);
		return this.validate(fields, line);
	}

	private async rowAfterLookup(fields: string[], line: number, chamberCode: string, recipe: string, step: string): Promise<void> {
		if (!this.chambers.has(chamberCode) && parseId(chamberCode, ID_MAX.chamber_id).ok) {
			const c = await this.trx('chambers').where({ code: chamberCode }).first('id', 'retired_at');
			let chamberId: number | null = c && c.retired_at === null ? Number(c.id) : null;
			if (c && c.retired_at !== null) this.retired.add(chamberCode);
			if (chamberId === null && !c && this.opts.registerUnknownChambers) {
				chamberId = await registerChamber(this.trx, chamberCode);
				this.stats.created.chambers.push(chamberCode);
			}
			this.chambers.set(chamberCode, chamberId);
		}
		const planKey = `${recipe}\u0000${step}`;
		if (!this.plans.has(planKey) && parseId(recipe, ID_MAX.recipe).ok && parseId(step, ID_MAX.step).ok) {
			this.plans.set(planKey, await resolveStepPlan(this.trx, this.header!, recipe, step, this.stats.created));
		}
		await this.validate(fields, line);
	}

	private validate(fields: string[], line: number): Promise<void> | undefined {
		const h = this.header!;
		const r = h.required;
		const errors: Rejection[] = [];
		const bad = (column: string, value: string, reason: string) => {
			if (errors.length < MAX_ERRORS_PER_ROW) errors.push({ line, column, value: clip(value), reason: `${column} ${reason}` });
		};
		const ids = {} as Record<'wafer_id' | 'lot_id' | 'chamber_id' | 'recipe' | 'step', string>;
		for (const col of ['wafer_id', 'lot_id', 'chamber_id', 'recipe', 'step'] as const) {
			const p = parseId(fields[r[col]], ID_MAX[col]);
			if (p.ok) ids[col] = p.value;
			else bad(col, fields[r[col]], p.reason);
		}
		const ts = parseInstant(fields[r.processed_at]);
		let processedAt = 0;
		if (!ts.ok) bad('processed_at', fields[r.processed_at], ts.reason);
		else if (ts.value > this.latestAllowed)
			bad(
				'processed_at',
				fields[r.processed_at],
				`is ${new Date(ts.value).toISOString()}, more than ${Math.round(this.opts.futureToleranceMs / 60_000)} min after the server's clock (${new Date(this.opts.receivedAt).toISOString()}): check the tool host's clock and zone`
			);
		else processedAt = ts.value;
		let chamberId: number | null = null;
		if (ids.chamber_id !== undefined) {
			chamberId = this.chambers.get(ids.chamber_id) ?? null;
			if (chamberId === null)
				bad(
					'chamber_id',
					ids.chamber_id,
					this.retired.has(ids.chamber_id)
						? 'is a retired chamber: an admin must restore it (Admin → Fab structure) before it takes new wafers'
						: this.opts.registerUnknownChambers
							? 'could not be registered'
							: 'is not a known chamber: an admin must add it to the fab structure first (or allow auto-registration)'
				);
		}
		let plan: StepPlan | undefined;
		if (ids.recipe !== undefined && ids.step !== undefined) {
			plan = this.plans.get(`${ids.recipe}\u0000${ids.step}`);
			if (plan?.refusal) {
				errors.push({ line, column: null, value: null, reason: plan.refusal });
				this.refusedForSet.set(plan, (this.refusedForSet.get(plan) ?? 0) + 1);
				plan = undefined;
			}
		}
		let slot: number | null = null;
		let rfOn: number | null = null;
		if (h.optional.slot !== undefined) {
			const p = parseSlot(fields[h.optional.slot]);
			if (p.ok) slot = p.value;
			else bad('slot', fields[h.optional.slot], p.reason);
		}
		if (h.optional.rf_on_s !== undefined) {
			const p = parseRfOn(fields[h.optional.rf_on_s]);
			if (p.ok) rfOn = p.value;
			else bad('rf_on_s', fields[h.optional.rf_on_s], p.reason);
		}
		const F = h.features;
		const values = new Float64Array(plan ? plan.length : F.length);
		const positions = plan?.positions;
		for (let i = 0; i < F.length; i++) {
			const s = fields[F[i].index];
			const v = +s;
			// Fast path: a finite non-zero number that starts like a decimal and is not 0x…/0b…/0o… (signed
			// radix literals are NaN already). Everything else goes through parseNumberCell's full rules.
			const c0 = s.charCodeAt(0);
			if (v === v && v !== 0 && v - v === 0 && ((c0 >= 48 && c0 <= 57) || c0 === 45 || c0 === 46 || c0 === 43)) {
				const c1 = s.charCodeAt(1) | 0x20;
				if (c1 !== 120 && c1 !== 98 && c1 !== 111) {
					values[positions ? positions[i] : i] = v;
					continue;
				}
			}
			const p = parseNumberCell(s);
			if (p.ok) values[positions ? positions[i] : i] = p.value;
			else bad(F[i].name, s, p.reason);
		}
		if (plan && errors.length === 0) {
			for (const d of plan.derived) {
				const num = values[plan.positions[d.numerator]];
				const den = values[plan.positions[d.denominator]];
				if (!(den > 0)) {
					bad(F[d.denominator].name, String(den), `is ${den}: the argon actinometer line must be positive to form ${d.name}`);
					break;
				}
				values[d.position] = num / den;
			}
		}
		if (ids.wafer_id !== undefined && ids.recipe !== undefined && ids.step !== undefined) {
			const key = `${ids.wafer_id}\u0000${ids.recipe}\u0000${ids.step}`;
			const first = this.seen.get(key);
			if (first !== undefined)
				errors.push({
					line,
					column: 'wafer_id',
					value: ids.wafer_id,
					reason: `wafer ${ids.wafer_id} at ${ids.recipe} / ${ids.step} already appears on ${this.opts.unit} ${first} of this file`
				});
			else this.seen.set(key, line);
		}
		this.stats.rows.total++;
		if (errors.length || !plan || chamberId === null) {
			this.stats.rows.rejected++;
			for (const e of errors) this.addRejection(e);
			return this.maybeFlushRejections();
		}
		this.batch.push({
			line,
			waferId: ids.wafer_id,
			lotId: ids.lot_id,
			recipe: ids.recipe,
			step: ids.step,
			chamberId,
			plan,
			processedAt,
			slot,
			rfOn,
			values
		});
		if (this.batch.length >= BATCH_ROWS) return this.flush();
		return undefined;
	}

	private addRejection(e: Rejection) {
		this.stats.rejectionsTotal++;
		if (this.stats.rejections.length < REPORT_REJECTION_CAP) this.stats.rejections.push(e);
		this.rejectionRows.push({ ingest_file_id: this.opts.fileId, line: e.line, column: e.column, value: e.value, reason: e.reason });
	}

	private maybeFlushRejections(): Promise<void> | undefined {
		return this.rejectionRows.length >= INSERT_ROWS ? this.flushRejections() : undefined;
	}

	private async flushRejections(): Promise<void> {
		const rows = this.rejectionRows;
		this.rejectionRows = [];
		for (let i = 0; i < rows.length; i += 500) await this.trx('ingest_rejections').insert(rows.slice(i, i + 500));
	}

	/** Write the queued rows, note the ones already stored by an earlier file, score the new ones. */
	private async flush(): Promise<void> {
		const batch = this.batch;
		this.batch = [];
		if (batch.length === 0) return;
		const createdAt = Date.now();
		const inserted: Array<{ id: number; wafer_id: string; recipe_step_id: number }> = [];
		for (let i = 0; i < batch.length; i += INSERT_ROWS) {
			const part = await this.trx('wafer_steps')
				.insert(
					batch.slice(i, i + INSERT_ROWS).map((p) => ({
						wafer_id: p.waferId,
						lot_id: p.lotId,
						chamber_id: p.chamberId,
						recipe_step_id: p.plan.recipeStepId,
						processed_at: p.processedAt,
						slot: p.slot,
						feature_set_version: p.plan.featureSetVersion,
						feature_values: encodeValues(p.values),
						rf_on_s: p.rfOn,
						scoring_state: 'pending',
						ingest_file_id: this.opts.fileId,
						created_at: createdAt
					}))
				)
				.onConflict(['wafer_id', 'recipe_step_id'])
				.ignore()
				.returning(['id', 'wafer_id', 'recipe_step_id']);
			inserted.push(...part);
		}
		for (const r of inserted) this.storedSteps.add(Number(r.recipe_step_id));
		const idOf = new Map(inserted.map((r) => [`${r.wafer_id}\u0000${r.recipe_step_id}`, Number(r.id)]));
		const fresh: NewWaferStep[] = [];
		const dups: Pending[] = [];
		for (const p of batch) {
			const id = idOf.get(`${p.waferId}\u0000${p.plan.recipeStepId}`);
			if (id === undefined) dups.push(p);
			else
				fresh.push({
					id,
					chamberId: p.chamberId,
					recipeStepId: p.plan.recipeStepId,
					processedAt: p.processedAt,
					featureSetVersion: p.plan.featureSetVersion,
					values: p.values
				});
		}
		this.stats.rows.accepted += fresh.length;
		this.stats.rows.duplicate += dups.length;
		if (dups.length) await this.noteDuplicates(dups);
		const s = await scoreWaferSteps(this.trx, fresh);
		this.stats.waferSteps.scored += s.scored;
		this.stats.waferSteps.noBaseline += s.noBaseline;
		this.stats.alarmsOpened.push(...s.alarmsOpened);
	}

	private async noteDuplicates(dups: Pending[]) {
		const room = REPORT_DUPLICATE_CAP - this.stats.duplicates.length;
		if (room <= 0) return;
		const sample = dups.slice(0, room);
		const rows: Array<{ wafer_id: string; recipe_step_id: number; ingest_file_id: number | null }> = await this.trx('wafer_steps')
			.whereIn('wafer_id', sample.map((d) => d.waferId))
			.select('wafer_id', 'recipe_step_id', 'ingest_file_id');
		const by = new Map(rows.map((r) => [`${r.wafer_id}\u0000${r.recipe_step_id}`, r.ingest_file_id]));
		for (const d of sample)
			this.stats.duplicates.push({
				line: d.line,
				waferId: d.waferId,
				recipe: d.recipe,
				step: d.step,
				storedByFileId: by.get(`${d.waferId}\u0000${d.plan.recipeStepId}`) ?? null
			});
	}

	async finish(): Promise<WriterStats> {
		await this.flush();
		await this.flushRejections();
		const columns = this.header?.features.map((f) => f.name) ?? [];
		for (const [plan, rows] of this.refusedForSet)
			await recordProposal(this.trx, {
				fileId: this.opts.fileId,
				recipeStepId: plan.recipeStepId,
				baseSetVersion: plan.featureSetVersion,
				columns,
				added: plan.mismatch?.added ?? [],
				missing: plan.mismatch?.missing ?? [],
				rows
			});
		await this.undoUnusedCatalogs();
		return this.stats;
	}

	/**
	 * A recipe step this file created but stored no row for (every row refused) is removed again, with
	 * its catalog, and its recipe when the file created that too: a refused file leaves nothing behind.
	 */
	private async undoUnusedCatalogs(): Promise<void> {
		for (const plan of this.plans.values()) {
			const made = plan?.createdHere;
			if (!plan || !made || this.storedSteps.has(plan.recipeStepId)) continue;
			await this.trx('features').where({ recipe_step_id: plan.recipeStepId }).delete();
			await this.trx('recipe_steps').where({ id: plan.recipeStepId }).delete();
			this.stats.created.recipeSteps = this.stats.created.recipeSteps.filter((l) => l !== made.label);
			if (made.recipeCreated) {
				const left = await this.trx('recipe_steps').where({ recipe_id: made.recipeId }).first('id');
				if (!left) {
					await this.trx('recipes').where({ id: made.recipeId }).delete();
					this.stats.created.recipes = this.stats.created.recipes.filter((c) => c !== made.recipeCode);
				}
			}
		}
	}
}
