/**
 * Alarm mails: one mail when alarms open, never for an extension of a live alarm (extensions write no
 * `opened` action). A subscriber gets at most one alarm mail per `alarmGroupMinutes` (mail policy):
 * alarms that open within that time wait and go together in the next mail.
 *
 * Each subscription keeps a cursor: the last `alarm_actions` id it has been mailed up to. A run reads
 * the `opened` actions after the cursor (in scope, at or above the chosen severity), queues one mail
 * keyed by user and the last action id, and moves the cursor — in one transaction, so a restart neither
 * repeats nor drops an alarm.
 */
import type { Knex } from 'knex';
import { RULE_LABELS, type AlarmRule } from '../alarms.ts';
import { db } from '../db.ts';
import { now } from '../time.ts';
import { alarmFacts, type AlarmFacts } from './alarm-facts.ts';
import type { RenderedMail } from './digest-render.ts';
import { C, esc, link, notice, page, section, table } from './html.ts';
import { mailLinks } from './links.ts';
import { enqueueMail } from './outbox.ts';
import { getMailPolicy } from './policy.ts';
import { chambersInScope, getSubscription, scopeLabel, type Subscription } from './subscriptions.ts';
import { unsubscribeUrl } from './unsubscribe.ts';
import { leakReminder, plural, ratio, RECOMMENDATION_NOTE } from './wording.ts';
import { formatInZone } from './zones.ts';
import { featureLabel } from '../../components/display/feature-name.ts';

export interface OpenedAlarm {
	id: number;
	chamberCode: string;
	recipeStep: string;
	rule: string;
	severity: 'warning' | 'alarm';
	state: string;
	openedAt: number;
	worstRatio: number | null;
	waferCount: number;
	facts: AlarmFacts;
}

const SEVERITIES: Record<string, string[]> = { warning: ['warning', 'alarm'], alarm: ['alarm'] };
const MAX_LISTED = 30;

async function openedSince(sub: Subscription, after: number, upTo: number, k: Knex): Promise<OpenedAlarm[]> {
	const chamberIds = await chambersInScope(sub, k);
	if (!chamberIds.length) return [];
	const rows = await k('alarm_actions as x')
		.join('alarms as a', 'a.id', 'x.alarm_id')
		.join('chambers as c', 'c.id', 'a.chamber_id')
		.join('recipe_steps as rs', 'rs.id', 'a.recipe_step_id')
		.join('recipes as r', 'r.id', 'rs.recipe_id')
		.where('x.action', 'opened')
		.andWhere('x.id', '>', after)
		.andWhere('x.id', '<=', upTo)
		.whereIn('a.severity', SEVERITIES[sub.alarmMinSeverity])
		.whereIn('a.chamber_id', chamberIds)
		.orderBy('x.id')
		.select('a.*', 'c.code', 'r.code as recipe', 'rs.name as step');
	const out: OpenedAlarm[] = [];
	for (const r of rows) {
		let detail: Record<string, unknown> = {};
		try {
			detail = r.detail_json ? JSON.parse(r.detail_json) : {};
		} catch {
			detail = {};
		}
		out.push({
			id: r.id,
			chamberCode: r.code,
			recipeStep: `${r.recipe} / ${r.step}`,
			rule: RULE_LABELS[r.rule as AlarmRule] ?? r.rule,
			severity: r.severity,
			state: r.state,
			openedAt: Number(r.opened_at),
			worstRatio: r.worst_ratio === null ? null : Number(r.worst_ratio),
			waferCount: Number(r.wafer_count),
			facts: await alarmFacts({ rule: r.rule, baselineId: r.baseline_id, worstWaferStepId: r.worst_wafer_step_id, detail }, k)
		});
	}
	return out;
}

export function renderAlarmMail(alarms: OpenedAlarm[], o: { displayName: string; timeZone: string; scopeLabel: string; unsubscribeUrl: string }): RenderedMail {
	const when = (t: number) => formatInZone(t, o.timeZone, { day: 'numeric', month: 'short', hour: '2-digit', minute: '2-digit' });
	const chambers = [...new Set(alarms.map((a) => a.chamberCode))];
	const one = alarms.length === 1 ? alarms[0] : null;
	const subject = one
		? `Lockstep alarm: ${one.chamberCode} ${one.rule} (worst ratio ${ratio(one.worstRatio)})`
		: `Lockstep: ${alarms.length} alarms opened on ${chambers.slice(0, 4).join(', ')}${chambers.length > 4 ? ` and ${chambers.length - 4} more` : ''}`;
	const gases = [...new Set(alarms.flatMap((a) => a.facts.leakGases))].sort();
	const leak = gases.length ? leakReminder(gases) : null;
	const feats = (f: AlarmFacts) =>
		f.top.length ? `${f.top.map((t) => (t.share === null ? featureLabel(t.feature) : `${featureLabel(t.feature)} (${Math.round(t.share * 100)} %)`)).join(', ')}${f.basis && f.basis !== 'fleet' ? ` — contributions to ${f.basis}` : f.basis === 'fleet' ? ' — apart from the fleet' : ''}` : '—';
	const listed = alarms.slice(0, MAX_LISTED);
	const title = one ? 'An alarm opened' : `${alarms.length} alarms opened`;
	const subtitle = one ? `${esc(one.chamberCode)} · ${esc(one.recipeStep)} · ${esc(when(one.openedAt))} (${esc(o.timeZone)})` : `${esc(plural(chambers.length, 'chamber'))} · ${esc(when(alarms[0].openedAt))} – ${esc(when(alarms[alarms.length - 1].openedAt))} (${esc(o.timeZone)})`;
	const H: string[] = [];
	if (leak) H.push(notice(leak.title, esc(leak.body)));
	H.push(
		section(
			one ? 'Alarm' : 'Alarms, in the order they opened',
			table(
				['Opened', 'Chamber', 'Rule', 'Worst ratio', 'Leading features', ''],
				listed.map((a) => [
					esc(when(a.openedAt)),
					esc(a.chamberCode) + `<br><span style="color:${C.ink3};font-size:12px">${esc(a.recipeStep)}</span>`,
					esc(a.rule) + (a.severity === 'alarm' ? ` <strong style="color:${C.alarm}">alarm</strong>` : ` <span style="color:${C.warn}">warning</span>`) + (a.state !== 'open' ? `<br><span style="color:${C.ink3};font-size:12px">now ${esc(a.state)}</span>` : ''),
					`<strong>${esc(ratio(a.worstRatio))}</strong>`,
					esc(feats(a.facts)) + (a.facts.leakGases.length ? ` <strong style="color:${C.warn}">leak-like</strong>` : ''),
					link(mailLinks.alarm(a.id), 'Open')
				]),
				[3]
			),
			'',
			alarms.length > listed.length ? `The first ${listed.length} of ${alarms.length}; ${link(mailLinks.openAlarms(), 'all open alarms')}.` : undefined
		)
	);
	H.push(notice('Recommendations only', esc(RECOMMENDATION_NOTE), 'info'));
	const footer = `For ${esc(o.displayName)}, covering ${esc(o.scopeLabel)}. ${link(mailLinks.mailSettings(), 'Mail settings')} · ${link(o.unsubscribeUrl, 'Unsubscribe from alarm mails')}`;
	const html = page({ preheader: subject, title, subtitle, body: H.join('\n'), footer });
	const T: string[] = [`LOCKSTEP — ${title.toUpperCase()}`, subtitle.replace(/&[a-z#0-9]+;/g, (e) => ({ '&amp;': '&', '&lt;': '<', '&gt;': '>', '&quot;': '"', '&#39;': "'" })[e] ?? e), ''];
	if (leak) T.push(`!! ${leak.title}`, `   ${leak.body}`, '');
	for (const a of listed)
		T.push(
			`* ${when(a.openedAt)}  ${a.chamberCode}  ${a.recipeStep}  ${a.rule} (${a.severity}${a.state !== 'open' ? `, now ${a.state}` : ''})  worst ratio ${ratio(a.worstRatio)}${a.facts.leakGases.length ? '  [leak-like]' : ''}`,
			`  leading features: ${feats(a.facts)}`,
			`  ${mailLinks.alarm(a.id)}`
		);
	if (alarms.length > listed.length) T.push(`(the first ${listed.length} of ${alarms.length}; all: ${mailLinks.openAlarms()})`);
	T.push('', RECOMMENDATION_NOTE, '', `For ${o.displayName}, covering ${o.scopeLabel}.`, `Mail settings: ${mailLinks.mailSettings()}`, `Unsubscribe from alarm mails: ${o.unsubscribeUrl}`);
	return { subject, text: T.join('\n') + '\n', html, attachments: [] };
}

export interface AlarmMailResult {
	queued: { userId: string; alarms: number; outboxId: number }[];
	/** subscribers with alarms waiting for their grouping window to end */
	waiting: number;
}

export async function runAlarmMails(at: number = now(), k: Knex = db()): Promise<AlarmMailResult> {
	const policy = await getMailPolicy(k);
	const windowMs = policy.alarmGroupMinutes * 60_000;
	const top = Number((await k('alarm_actions').max({ m: 'id' }).first())?.m ?? 0);
	const subs = await k('mail_subscriptions as s')
		.join('users as u', 'u.id', 's.user_id')
		.whereNull('u.disabled_at')
		.where('s.alarm_mails', true)
		.select('s.user_id', 'u.display_name');
	const out: AlarmMailResult = { queued: [], waiting: 0 };
	for (const r of subs) {
		const sub = await getSubscription(r.user_id, k);
		if (!sub) continue;
		if (sub.alarmCursor === null) {
			await k('mail_subscriptions').where({ user_id: sub.userId }).update({ alarm_cursor: top });
			continue;
		}
		if (sub.alarmCursor >= top) continue;
		const inWindow = sub.lastAlarmMailAt !== null && at - sub.lastAlarmMailAt < windowMs;
		const alarms = await openedSince(sub, sub.alarmCursor, top, k);
		if (!alarms.length) {
			// Nothing for this subscriber: skip past the actions that were not theirs.
			await k('mail_subscriptions').where({ user_id: sub.userId }).andWhere('alarm_cursor', sub.alarmCursor).update({ alarm_cursor: top });
			continue;
		}
		if (inWindow) {
			out.waiting++;
			continue;
		}
		const mail = renderAlarmMail(alarms, {
			displayName: r.display_name,
			timeZone: sub.timeZone,
			scopeLabel: scopeLabel(sub),
			unsubscribeUrl: await unsubscribeUrl(sub.userId, 'alarms', k)
		});
		const q = await k.transaction(async (trx) => {
			// Only the run that moves the cursor queues the mail (compare-and-set on the old cursor).
			const moved = await trx('mail_subscriptions')
				.where({ user_id: sub.userId })
				.andWhere('alarm_cursor', sub.alarmCursor)
				.update({ alarm_cursor: top, last_alarm_mail_at: at });
			if (!moved) return null;
			return enqueueMail(
				{
					kind: 'alarm',
					to: sub.email,
					userId: sub.userId,
					subject: mail.subject,
					text: mail.text,
					html: mail.html,
					headers: { 'List-Unsubscribe': `<${await unsubscribeUrl(sub.userId, 'alarms', trx)}>` },
					dedupeKey: `alarm:${sub.userId}:${top}`
				},
				trx
			);
		});
		if (q?.created) out.queued.push({ userId: sub.userId, alarms: alarms.length, outboxId: q.id });
	}
	return out;
}
