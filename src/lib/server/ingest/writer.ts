/**
 * The row-by-row half of the pipeline, shared by CSV and JSON input, in two phases (pipeline.ts):
 *
 * 1. reading — validate each row and turn it into a packed vector, with read-only lookups, and stage
 *    the accepted ones in a temporary file (staging.ts). No write lock is held, however long the file.
 * 2. publishing, in short transactions (pipeline.ts): `prepare` creates the recipe steps and chambers
 *    the stored rows need; `stageRows` copies the staged rows into `ingest_staged_rows` a batch per
 *    transaction, sorting out rows already stored (duplicate or conflict); `flip` moves them into
 *    wafer_steps with one INSERT … SELECT and stores the kept rejections; `scoreStaged` then scores the
 *    file's new wafer-steps a batch per transaction. A small file (at most DIRECT_ROWS rows) is
 *    published by `publishDirect` in one transaction instead.
 *
 * Rejections are bounded per file (issue 13): the first REJECTION_ROWS_KEPT in full, then counts per
 * column and reason; a file whose first REFUSE_AFTER_ROWS rows are all refused for what the bytes say
 * (not for the fab's state: unknown chamber, feature set, clock) is refused there, unread further.
 * `row()` is synchronous on the common path and returns a promise only when it must wait (first sight
 * of a chamber or recipe step, a full batch, a yield to the event loop).
 */
import type { Knex } from 'knex';
import { scoreWaferSteps, type ScoringResult } from '../scoring.ts';
import { analyseHeader, type Header } from './columns.ts';
import { createPlannedStep, resolveStepPlan, registerChamber, type Created, type CreatedIds, type StepPlan } from './catalog.ts';
import { clip, IngestFileError } from './errors.ts';
import {
	BATCH_ROWS,
	ID_MAX,
	INSERT_ROWS,
	MAX_ERRORS_PER_ROW,
	REFUSE_AFTER_ROWS,
	REJECTION_GROUPS_CAP,
	REJECTION_ROWS_KEPT,
	REPORT_DUPLICATE_CAP,
	REPORT_REJECTION_CAP,
	YIELD_EVERY_ROWS
} from './limits.ts';
import type { DuplicateRow, Rejection, RejectionCount } from './report.ts';
import { StagingFile, type StagedRow } from './staging.ts';
import { parseId, parseInstant, parseNumberCell, parseRfOn, parseSlot } from './values.ts';
import { decodeValues, encodeValues } from '../feature-values.ts';
import { recordProposal } from './feature-sets.ts';

export interface WriterOptions {
	/** where the accepted rows are staged while the file is read */
	stagingPath: string;
	registerUnknownChambers: boolean;
	futureToleranceMs: number;
	/** the instant the file was received (the future check's "now") */
	receivedAt: number;
	/** what the first lines are called in messages: "line" for CSV, "row" for JSON */
	unit: 'line' | 'row';
}

/** A staged row resolved for publishing: real chamber and recipe-step ids. */
interface Pending extends StagedRow {
	plan: StepPlan;
}

/** Stored columns compared when a wafer × step is already stored (a duplicate must match them all). */
interface StoredRow {
	id: number;
	wafer_id: string;
	recipe_step_id: number;
	chamber_id: number;
	lot_id: string;
	processed_at: number;
	slot: number | null;
	rf_on_s: number | null;
	feature_set_version: number;
	feature_values: Buffer;
	ingest_file_id: number | null;
}

const yieldToLoop = () => new Promise<void>((resolve) => setImmediate(resolve));

/**
 * Take SQLite's write lock at a transaction's start with a no-op write on the file's row. A transaction
 * that reads first and writes later fails at once with SQLITE_BUSY_SNAPSHOT when another process
 * committed in between (busy_timeout does not apply to that upgrade); one that writes first waits its
 * turn instead. On PostgreSQL the no-op costs one row lock.
 */
export async function writeFirst(trx: Knex.Transaction, fileId: number): Promise<void> {
	await trx('ingest_files').where({ id: fileId }).update({ id: fileId });
}

export interface WriterStats {
	rows: { total: number; accepted: number; rejected: number; duplicate: number };
	waferSteps: { scored: number; noBaseline: number };
	alarmsOpened: number[];
	created: Created;
	rejections: Rejection[];
	rejectionsTotal: number;
	/** every rejection counted per column and reason (also those past the kept ones) */
	rejectionCounts: RejectionCount[];
	duplicates: DuplicateRow[];
}

/** Why a row was refused, for counting and for the early refusal. */
interface RejectionNote {
	/** the reason without the row's own values, so equal problems count together */
	generic?: string;
	/** refused for the fab's state (unknown chamber, feature set, clock), not for the file's bytes */
	context?: boolean;
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
		rejectionCounts: [],
		duplicates: []
	};
	private batch: StagedRow[] = [];
	/** the first REJECTION_ROWS_KEPT rejections, stored in full when the file is published */
	private readonly kept: Rejection[] = [];
	private readonly counts = new Map<string, RejectionCount>();
	private contextRejections = 0;
	private readonly seen = new Map<string, number>();
	/** chamber code → id; a negative id is a chamber registered when the file is published */
	private readonly chambers = new Map<string, number | null>();
	/** chambers an admin retired (fab structure): their rows are refused, their history kept */
	private readonly retired = new Set<string>();
	private readonly plans = new Map<string, StepPlan>();
	/** plans and placeholder chambers with at least one staged row: only these are created */
	private readonly usedPlans = new Set<string>();
	private readonly usedPlaceholders = new Set<number>();
	/** rows refused because their step's feature set differs, per plan: each becomes a proposal */
	private readonly refusedForSet = new Map<StepPlan, number>();
	private readonly latestAllowed: number;
	private readonly stage: StagingFile;
	private nextPlaceholder = -1;
	private sinceYield = 0;

	constructor(
		private readonly k: Knex,
		private readonly opts: WriterOptions
	) {
		this.latestAllowed = opts.receivedAt + opts.futureToleranceMs;
		this.stage = new StagingFile(opts.stagingPath);
	}

	setHeader(fields: string[]): void {
		this.header = analyseHeader(fields);
	}

	/** Reject a row as a whole (wrong field count, broken quotes). */
	rejectRow(line: number, reason: string, value: string | null = null, generic?: string): Promise<void> | undefined {
		this.stats.rows.total++;
		this.stats.rows.rejected++;
		this.addRejection({ line, column: null, value: value === null ? null : clip(value), reason }, { generic });
		return this.afterRejectedRow();
	}

	/** Validate one data row and queue it; returns a promise only when the caller must wait. */
	row(fields: string[], line: number): Promise<void> | undefined {
		const h = this.header!;
		if (fields.length !== h.names.length) {
			return this.rejectRow(
				line,
				`The ${this.opts.unit} has ${fields.length} field${fields.length === 1 ? '' : 's'}; the header has ${h.names.length}.`,
				fields.join(','),
				`The ${this.opts.unit} has a different number of fields than the header.`
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
			const c = await this.k('chambers').where({ code: chamberCode }).first('id', 'retired_at');
			let chamberId: number | null = c && c.retired_at === null ? Number(c.id) : null;
			if (c && c.retired_at !== null) this.retired.add(chamberCode);
			// registered when the file is published, and only when one of its rows is stored
			if (chamberId === null && !c && this.opts.registerUnknownChambers) chamberId = this.nextPlaceholder--;
			this.chambers.set(chamberCode, chamberId);
		}
		const planKey = `${recipe}\u0000${step}`;
		if (!this.plans.has(planKey) && parseId(recipe, ID_MAX.recipe).ok && parseId(step, ID_MAX.step).ok) {
			this.plans.set(planKey, await resolveStepPlan(this.k, this.header!, recipe, step, this.nextPlaceholder--));
		}
		await this.validate(fields, line);
	}

	private validate(fields: string[], line: number): Promise<void> | undefined {
		const h = this.header!;
		const r = h.required;
		const errors: Array<Rejection & RejectionNote> = [];
		const bad = (column: string, value: string, reason: string, note: RejectionNote = {}) => {
			if (errors.length < MAX_ERRORS_PER_ROW)
				errors.push({ line, column, value: clip(value), reason: `${column} ${reason}`, generic: note.generic && `${column} ${note.generic}`, context: note.context });
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
				`is ${new Date(ts.value).toISOString()}, more than ${Math.round(this.opts.futureToleranceMs / 60_000)} min after the server's clock (${new Date(this.opts.receivedAt).toISOString()}): check the tool host's clock and zone`,
				{ generic: 'lies in the future beyond the tolerance: check the tool host\'s clock and zone', context: true }
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
							: 'is not a known chamber: an admin must add it to the fab structure first (or allow auto-registration)',
					{ context: true }
				);
		}
		let plan: StepPlan | undefined;
		if (ids.recipe !== undefined && ids.step !== undefined) {
			plan = this.plans.get(`${ids.recipe}\u0000${ids.step}`);
			if (plan?.refusal) {
				errors.push({ line, column: null, value: null, reason: plan.refusal, context: true });
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
					bad(F[d.denominator].name, String(den), `is ${den}: the argon actinometer line must be positive to form ${d.name}`, {
						generic: `is not positive: the argon actinometer line must be positive to form ${d.name}`
					});
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
					reason: `wafer ${ids.wafer_id} at ${ids.recipe} / ${ids.step} already appears on ${this.opts.unit} ${first} of this file`,
					generic: `wafer_id repeats a wafer × step given earlier in this file`
				});
			else this.seen.set(key, line);
		}
		this.stats.rows.total++;
		if (errors.length || !plan || chamberId === null) {
			this.stats.rows.rejected++;
			for (const { generic, context, ...e } of errors) this.addRejection(e, { generic, context });
			return this.afterRejectedRow();
		}
		this.batch.push({
			line,
			waferId: ids.wafer_id,
			lotId: ids.lot_id,
			recipe: ids.recipe,
			step: ids.step,
			chamberId,
			chamberCode: ids.chamber_id,
			planKey: `${ids.recipe}\u0000${ids.step}`,
			processedAt,
			slot,
			rfOn,
			values
		});
		this.usedPlans.add(`${ids.recipe}\u0000${ids.step}`);
		if (chamberId < 0) this.usedPlaceholders.add(chamberId);
		if (this.batch.length >= BATCH_ROWS) return this.flushStage();
		return this.tick();
	}

	/** Every YIELD_EVERY_ROWS rows, let the event loop run (a chunk of short rows is parsed in one go). */
	private tick(): Promise<void> | undefined {
		if (++this.sinceYield < YIELD_EVERY_ROWS) return undefined;
		this.sinceYield = 0;
		return yieldToLoop();
	}

	private addRejection(e: Rejection, note: RejectionNote = {}) {
		this.stats.rejectionsTotal++;
		if (note.context) this.contextRejections++;
		if (this.stats.rejections.length < REPORT_REJECTION_CAP) this.stats.rejections.push(e);
		if (this.kept.length < REJECTION_ROWS_KEPT) this.kept.push(e);
		const reason = note.generic ?? e.reason;
		let key = `${e.column ?? ''}\u0000${reason}`;
		let c = this.counts.get(key);
		if (!c && this.counts.size >= REJECTION_GROUPS_CAP) {
			key = '\u0000(other)';
			c = this.counts.get(key);
			if (!c) this.counts.set(key, (c = { column: null, reason: 'other reasons (too many different ones to count apart)', count: 0 }));
		}
		if (!c) this.counts.set(key, (c = { column: e.column, reason, count: 0 }));
		c.count++;
	}

	/**
	 * After a refused row: a file whose first REFUSE_AFTER_ROWS rows are all refused for what its bytes
	 * say is refused now — reading the rest would only count more of the same (the 77,000 empty lines of
	 * issue 13). Rows refused for the fab's state (unknown chamber, feature set, clock) do not count:
	 * those files are read to the end, so a feature-set proposal counts every row.
	 */
	private afterRejectedRow(): Promise<void> | undefined {
		const r = this.stats.rows;
		if (r.rejected === r.total && r.total >= REFUSE_AFTER_ROWS && this.contextRejections === 0) {
			const top = this.rejectionCounts()
				.slice(0, 3)
				.map((c) => `${c.reason} (${c.count.toLocaleString('en')}×)`)
				.join('; ');
			const first = this.kept[0];
			throw new IngestFileError(
				`The first ${r.total.toLocaleString('en')} ${this.opts.unit}s were all refused, so the file is refused without reading the rest. Most often: ${top}.`,
				{ line: first?.line ?? null, column: first?.column ?? null, value: first?.value ?? null },
				'input',
				{ rejections: this.kept.slice(), rejectionsTotal: this.stats.rejectionsTotal, rejectionCounts: this.rejectionCounts(), rowsRead: r.total }
			);
		}
		return this.tick();
	}

	rejectionCounts(): RejectionCount[] {
		return [...this.counts.values()].sort((a, b) => b.count - a.count).map((c) => ({ ...c }));
	}

	/** Stage the queued rows (phase 1), yielding to the event loop once per batch. */
	private async flushStage(): Promise<void> {
		const batch = this.batch;
		this.batch = [];
		if (batch.length) await this.stage.append(batch);
		await yieldToLoop();
	}

	/** The end of the input: stage what is queued. Afterwards only `publish` or `discard`. */
	async endOfInput(): Promise<void> {
		await this.flushStage();
		await this.stage.close();
	}

	/** Remove the staged rows (always called, after publishing or a refusal). */
	async discard(): Promise<void> {
		await this.stage.remove();
	}

	private readonly chamberIds = new Map<number, number>();
	readonly createdIds: CreatedIds = { recipeIds: [], recipeStepIds: [], chamberIds: [] };
	private stagedRows = 0;

	/** Publishing 1 (inside the transaction that records the file): create what the stored rows need. */
	async prepare(trx: Knex.Transaction): Promise<void> {
		for (const [code, placeholder] of this.chambers) {
			if (placeholder === null || placeholder >= 0 || !this.usedPlaceholders.has(placeholder)) continue;
			const existing = await trx('chambers').where({ code }).first('id');
			if (existing) this.chamberIds.set(placeholder, Number(existing.id));
			else {
				const id = await registerChamber(trx, code);
				this.chamberIds.set(placeholder, id);
				this.createdIds.chamberIds.push(id);
				this.stats.created.chambers.push(code);
			}
		}
		for (const key of this.usedPlans) await createPlannedStep(trx, this.header!, this.plans.get(key)!, this.stats.created, this.createdIds);
	}

	/**
	 * Publishing 2: copy the staged rows into `ingest_staged_rows`, one short transaction per batch. A
	 * wafer × step already stored is sorted out here: the same content is a duplicate (a no-op), other
	 * content a conflict refused with its differences (issue 13) — the stored row is never changed.
	 */
	async stageRows(k: Knex, fileId: number): Promise<void> {
		for await (const staged of this.stage.batches(BATCH_ROWS)) {
			const batch = this.resolve(staged);
			await k.transaction(async (trx) => {
				await writeFirst(trx, fileId);
				const stored = await this.storedRows(trx, batch);
				const fresh = batch.filter((p) => !stored.has(`${p.waferId}\u0000${p.plan.recipeStepId}`));
				await this.insertRows(trx, 'ingest_staged_rows', fileId, fresh);
				this.stagedRows += fresh.length;
				const already = batch.filter((p) => stored.has(`${p.waferId}\u0000${p.plan.recipeStepId}`));
				if (already.length) await this.sortAlreadyStored(trx, already, stored);
			});
		}
	}

	/**
	 * Publishing 3, the flip (one transaction, with the file's status): move the staged rows into
	 * wafer_steps in one statement, store the kept rejections and the feature-set proposals.
	 */
	async flip(trx: Knex.Transaction, fileId: number): Promise<WriterStats> {
		const cols = 'wafer_id, lot_id, slot, chamber_id, recipe_step_id, processed_at, feature_set_version, feature_values, rf_on_s, created_at';
		const res = (await trx.raw(
			`insert into wafer_steps (${cols}, scoring_state, ingest_file_id) select ${cols}, 'pending', ingest_file_id from ingest_staged_rows where ingest_file_id = ? on conflict (wafer_id, recipe_step_id) do nothing`,
			[fileId]
		)) as { changes?: number; rowCount?: number } | undefined;
		// A row stored by another file between staging and the flip was skipped: count it as a duplicate.
		// better-sqlite3 reports `changes`, pg `rowCount`; otherwise count the skipped rows.
		const inserted = typeof res?.changes === 'number' ? res.changes : typeof res?.rowCount === 'number' ? res.rowCount : null;
		const raced =
			inserted !== null
				? this.stagedRows - inserted
				: Number(
						(
							await trx('ingest_staged_rows as s')
								.join('wafer_steps as w', function () {
									this.on('w.wafer_id', 's.wafer_id').andOn('w.recipe_step_id', 's.recipe_step_id');
								})
								.where('s.ingest_file_id', fileId)
								.andWhereNot('w.ingest_file_id', fileId)
								.count({ n: '*' })
								.first()
						)?.n ?? 0
					);
		// The staged rows are inert once flipped; removeStaged clears them after, in short transactions.
		this.stats.rows.accepted += this.stagedRows - raced;
		this.stats.rows.duplicate += raced;
		return this.storeRejections(trx, fileId);
	}

	/** Rows staged in the temporary file while the file was read. */
	get rowsRead(): number {
		return this.stage.rows;
	}

	/**
	 * A small file (at most DIRECT_ROWS staged rows) is published in one transaction, as the lock it
	 * takes is no longer than one batch of a large file's: rows straight into wafer_steps, scored, the
	 * rejections stored. Call after `prepare` in the same transaction.
	 */
	async publishDirect(trx: Knex.Transaction, fileId: number): Promise<WriterStats> {
		for await (const staged of this.stage.batches(BATCH_ROWS)) {
			const batch = this.resolve(staged);
			const stored = await this.storedRows(trx, batch);
			const fresh = batch.filter((p) => !stored.has(`${p.waferId}\u0000${p.plan.recipeStepId}`));
			const ids = await this.insertRows(trx, 'wafer_steps', fileId, fresh);
			const already = batch.filter((p) => stored.has(`${p.waferId}\u0000${p.plan.recipeStepId}`));
			// another file's row stored between the lookup and the insert (the insert skipped it): sort it too
			const skipped = fresh.filter((p) => !ids.has(`${p.waferId}\u0000${p.plan.recipeStepId}`));
			if (skipped.length) for (const [key, r] of await this.storedRows(trx, skipped)) stored.set(key, r);
			if (already.length + skipped.length) await this.sortAlreadyStored(trx, [...already, ...skipped], stored);
			this.stats.rows.accepted += ids.size;
			await this.score(trx, fresh, ids);
		}
		return this.storeRejections(trx, fileId);
	}

	/**
	 * After the flip: score the file's new wafer-steps in file order, one transaction per batch, with the
	 * vectors from the staging file (not read back from the database).
	 */
	async scoreStaged(k: Knex, fileId: number): Promise<void> {
		for await (const staged of this.stage.batches(BATCH_ROWS)) {
			const batch = this.resolve(staged);
			await k.transaction(async (trx) => {
				await writeFirst(trx, fileId);
				const ids = new Map<string, number>();
				const wafers = [...new Set(batch.map((p) => p.waferId))];
				// by wafer id alone (the unique index), filtered here: with the file's own columns in the WHERE
				// the planner walked the file's index and read every pending row per batch
				for (let i = 0; i < wafers.length; i += INSERT_ROWS)
					for (const r of await trx('wafer_steps').whereIn('wafer_id', wafers.slice(i, i + INSERT_ROWS)).select('id', 'wafer_id', 'recipe_step_id', 'ingest_file_id', 'scoring_state'))
						if (Number(r.ingest_file_id) === fileId && r.scoring_state === 'pending') ids.set(`${r.wafer_id}\u0000${r.recipe_step_id}`, Number(r.id));
				await this.score(trx, batch, ids);
			});
			await yieldToLoop();
		}
	}

	private resolve(staged: StagedRow[]): Pending[] {
		return staged.map((r) => ({
			...r,
			chamberId: r.chamberId < 0 ? this.chamberIds.get(r.chamberId)! : r.chamberId,
			plan: this.plans.get(r.planKey)!
		}));
	}

	/** Score the rows of a batch that were stored (their ids by `wafer\0recipeStepId`). */
	private async score(trx: Knex.Transaction, batch: Pending[], ids: Map<string, number>): Promise<void> {
		const fresh = [];
		for (const p of batch) {
			const id = ids.get(`${p.waferId}\u0000${p.plan.recipeStepId}`);
			if (id !== undefined)
				fresh.push({ id, chamberId: p.chamberId, recipeStepId: p.plan.recipeStepId, processedAt: p.processedAt, featureSetVersion: p.plan.featureSetVersion, values: p.values });
		}
		const s = await scoreWaferSteps(trx, fresh);
		this.stats.waferSteps.scored += s.scored;
		this.stats.waferSteps.noBaseline += s.noBaseline;
		this.stats.alarmsOpened.push(...s.alarmsOpened);
	}

	/** Insert rows into wafer_steps (skipping a wafer × step stored meanwhile) or ingest_staged_rows; returns wafer_steps ids by key. */
	private async insertRows(trx: Knex.Transaction, table: 'wafer_steps' | 'ingest_staged_rows', fileId: number, rows: Pending[]): Promise<Map<string, number>> {
		const createdAt = Date.now();
		const ids = new Map<string, number>();
		for (let i = 0; i < rows.length; i += INSERT_ROWS) {
			const values = rows.slice(i, i + INSERT_ROWS).map((p) => ({
				ingest_file_id: fileId,
				wafer_id: p.waferId,
				lot_id: p.lotId,
				slot: p.slot,
				chamber_id: p.chamberId,
				recipe_step_id: p.plan.recipeStepId,
				processed_at: p.processedAt,
				feature_set_version: p.plan.featureSetVersion,
				feature_values: encodeValues(p.values),
				rf_on_s: p.rfOn,
				created_at: createdAt,
				...(table === 'wafer_steps' ? { scoring_state: 'pending' } : {})
			}));
			if (table === 'ingest_staged_rows') {
				await trx(table).insert(values);
				continue;
			}
			const part = await trx(table).insert(values).onConflict(['wafer_id', 'recipe_step_id']).ignore().returning(['id', 'wafer_id', 'recipe_step_id']);
			for (const r of part) ids.set(`${r.wafer_id}\u0000${r.recipe_step_id}`, Number(r.id));
		}
		return ids;
	}

	/** The kept rejections and the feature-set proposals, in the publishing transaction. */
	private async storeRejections(trx: Knex.Transaction, fileId: number): Promise<WriterStats> {
		const rows = this.kept.map((e) => ({ ingest_file_id: fileId, line: e.line, column: e.column, value: e.value, reason: e.reason }));
		for (let i = 0; i < rows.length; i += INSERT_ROWS) await trx('ingest_rejections').insert(rows.slice(i, i + INSERT_ROWS));
		const columns = this.header?.features.map((f) => f.name) ?? [];
		for (const [plan, n] of this.refusedForSet)
			await recordProposal(trx, {
				fileId,
				recipeStepId: plan.recipeStepId,
				baseSetVersion: plan.featureSetVersion,
				columns,
				added: plan.mismatch?.added ?? [],
				missing: plan.mismatch?.missing ?? [],
				rows: n
			});
		this.stats.rejectionCounts = this.rejectionCounts();
		return this.stats;
	}

	/** The stored rows of a batch's wafer × steps, by `wafer\0recipeStepId`. */
	private async storedRows(trx: Knex.Transaction, batch: Pending[]): Promise<Map<string, StoredRow>> {
		const stored = new Map<string, StoredRow>();
		const wafers = [...new Set(batch.map((p) => p.waferId))];
		const wanted = new Set(batch.map((p) => `${p.waferId}\u0000${p.plan.recipeStepId}`));
		for (let i = 0; i < wafers.length; i += INSERT_ROWS) {
			const part: StoredRow[] = await trx('wafer_steps')
				.whereIn('wafer_id', wafers.slice(i, i + INSERT_ROWS))
				.select('id', 'wafer_id', 'recipe_step_id', 'chamber_id', 'lot_id', 'processed_at', 'slot', 'rf_on_s', 'feature_set_version', 'feature_values', 'ingest_file_id');
			for (const r of part) {
				const key = `${r.wafer_id}\u0000${r.recipe_step_id}`;
				if (wanted.has(key)) stored.set(key, r);
			}
		}
		return stored;
	}

	/** Rows whose wafer × step is already stored: same content → duplicate; other content → refused with the differences. */
	private async sortAlreadyStored(trx: Knex.Transaction, rows: Pending[], stored: Map<string, StoredRow>): Promise<void> {
		const chamberCodes = new Map<number, string>();
		for (const p of rows) {
			const s = stored.get(`${p.waferId}\u0000${p.plan.recipeStepId}`);
			const diffs = s ? await this.differences(trx, p, s, chamberCodes) : ['the stored row could not be read'];
			if (diffs.length === 0) {
				this.stats.rows.duplicate++;
				if (this.stats.duplicates.length < REPORT_DUPLICATE_CAP)
					this.stats.duplicates.push({ line: p.line, waferId: p.waferId, recipe: p.recipe, step: p.step, storedByFileId: s?.ingest_file_id ?? null });
				continue;
			}
			this.stats.rows.rejected++;
			const list = diffs.length > 6 ? [...diffs.slice(0, 6), `${diffs.length - 6} more`] : diffs;
			this.addRejection(
				{
					line: p.line,
					column: 'wafer_id',
					value: p.waferId,
					reason: `wafer ${p.waferId} at ${p.recipe} / ${p.step} is already stored${s?.ingest_file_id ? ` (file #${s.ingest_file_id})` : ''} with other content — ${list.join('; ')}. The stored row is kept; if it is wrong, an engineer must correct it (a wafer × step is stored once)`
				},
				{ generic: 'conflicts with a stored wafer × step (same wafer and step, other content)', context: true }
			);
		}
	}

	/** What differs between a row of this file and the stored row of the same wafer × step (values to 1e-12 relative). */
	private async differences(trx: Knex.Transaction, p: Pending, s: StoredRow, codes: Map<number, string>): Promise<string[]> {
		const out: string[] = [];
		const code = async (id: number) => {
			if (!codes.has(id)) codes.set(id, String((await trx('chambers').where({ id }).first('code'))?.code ?? `#${id}`));
			return codes.get(id)!;
		};
		if (Number(s.chamber_id) !== p.chamberId) out.push(`chamber_id ${p.chamberCode} ≠ stored ${await code(Number(s.chamber_id))}`);
		if (s.lot_id !== p.lotId) out.push(`lot_id ${p.lotId} ≠ stored ${s.lot_id}`);
		if (Number(s.processed_at) !== p.processedAt)
			out.push(`processed_at ${new Date(p.processedAt).toISOString()} ≠ stored ${new Date(Number(s.processed_at)).toISOString()}`);
		if ((s.slot === null ? null : Number(s.slot)) !== p.slot) out.push(`slot ${p.slot ?? 'empty'} ≠ stored ${s.slot ?? 'empty'}`);
		if ((s.rf_on_s === null ? null : Number(s.rf_on_s)) !== p.rfOn) out.push(`rf_on_s ${p.rfOn ?? 'empty'} ≠ stored ${s.rf_on_s ?? 'empty'}`);
		if (Number(s.feature_set_version) !== p.plan.featureSetVersion) {
			out.push(`stored under feature set ${s.feature_set_version}, this file's under ${p.plan.featureSetVersion}`);
			return out;
		}
		const blob = s.feature_values;
		const stored = new Float64Array(blob.byteLength / 8);
		new Uint8Array(stored.buffer).set(blob);
		const names = this.header!.features;
		const nameAt = new Map<number, string>();
		names.forEach((f, i) => nameAt.set(p.plan.positions[i], f.name));
		for (const d of p.plan.derived) nameAt.set(d.position, d.name);
		let differing = 0;
		for (let j = 0; j < Math.max(stored.length, p.values.length); j++) {
			const a = p.values[j];
			const b = stored[j];
			if (a === b || Math.abs(a - b) <= 1e-12 * Math.max(Math.abs(a), Math.abs(b))) continue;
			if (differing++ < 3) out.push(`${nameAt.get(j) ?? `value ${j + 1}`} ${a} ≠ stored ${b}`);
		}
		if (differing > 3) out.push(`${differing - 3} more feature values differ`);
		return out;
	}
}

/** Remove a file's staged rows, a batch per transaction (after its flip, or when it is undone). */
export async function removeStaged(k: Knex, fileId: number): Promise<void> {
	for (;;) {
		const n = await k.transaction(async (trx) => {
			await writeFirst(trx, fileId);
			const ids = await trx('ingest_staged_rows').where({ ingest_file_id: fileId }).limit(BATCH_ROWS).pluck('id');
			for (let i = 0; i < ids.length; i += INSERT_ROWS) await trx('ingest_staged_rows').whereIn('id', ids.slice(i, i + INSERT_ROWS)).delete();
			return ids.length;
		});
		if (n === 0) return;
	}
}

/**
 * Score a published file's wafer-steps still `pending`, oldest first, one transaction per batch (each
 * short; the web server's writes pass between them). Also finishes a file whose scoring was interrupted.
 */
export async function scoreFile(k: Knex, fileId: number): Promise<ScoringResult> {
	const total: ScoringResult = { scored: 0, noBaseline: 0, alarmsOpened: [] };
	let lastIds = '';
	for (;;) {
		const done = await k.transaction(async (trx) => {
			await writeFirst(trx, fileId);
			// The order first, without the vectors (sorting rows with their vectors would read them all).
			const next: number[] = (
				await trx('wafer_steps')
					.where({ ingest_file_id: fileId, scoring_state: 'pending' })
					.orderBy([{ column: 'processed_at' }, { column: 'id' }])
					.limit(BATCH_ROWS)
					.select('id')
			).map((r) => Number(r.id));
			const rows: Array<{ id: number; chamber_id: number; recipe_step_id: number; processed_at: number; feature_set_version: number; feature_values: Buffer }> = [];
			for (let i = 0; i < next.length; i += INSERT_ROWS)
				rows.push(...(await trx('wafer_steps').whereIn('id', next.slice(i, i + INSERT_ROWS)).select('id', 'chamber_id', 'recipe_step_id', 'processed_at', 'feature_set_version', 'feature_values')));
			rows.sort((a, b) => Number(a.processed_at) - Number(b.processed_at) || Number(a.id) - Number(b.id));
			const ids = rows.map((r) => r.id).join(',');
			if (rows.length === 0 || ids === lastIds) return true; // nothing left (or nothing scoring can do)
			lastIds = ids;
			const r = await scoreWaferSteps(
				trx,
				rows.map((w) => ({
					id: Number(w.id),
					chamberId: Number(w.chamber_id),
					recipeStepId: Number(w.recipe_step_id),
					processedAt: Number(w.processed_at),
					featureSetVersion: Number(w.feature_set_version),
					values: decodeValues(w.feature_values)
				}))
			);
			total.scored += r.scored;
			total.noBaseline += r.noBaseline;
			total.alarmsOpened.push(...r.alarmsOpened);
			return false;
		});
		if (done) break;
		await yieldToLoop();
	}
	return total;
}
