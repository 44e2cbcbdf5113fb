/**
 * A digest as a mail: subject, HTML part, plain-text part with the same content, and the chart.
 *
 * The chart is an SVG attached as an inline part and referenced by Content-ID (`<img src="cid:…">`,
 * RFC 2392). Why CID and not a data: URI: several widely used webmail clients strip data: images,
 * while cid: parts are what desktop and webmail clients were built to show inline. Some clients do not
 * render SVG in any form; for them the image's alt text says what the chart shows, and the hour of the
 * highest value is written under it, so nothing depends on the picture. (A PNG would need a native
 * canvas, which Lockstep does not ship.)
 */
import { worstRatioChartSvg } from './chart.ts';
import type { DigestData } from './digest-data.ts';
import { openAlarmCount } from './digest-data.ts';
import { C, esc, link, notice, page, section, table } from './html.ts';
import { mailLinks } from './links.ts';
import type { InlineAttachment } from './outbox.ts';
import { age, leakReminder, plural, ratio, RECOMMENDATION_NOTE } from './wording.ts';
import { formatInZone } from './zones.ts';
import { featureLabel } from '../../components/display/feature-name.ts';

export interface RenderedMail {
	subject: string;
	text: string;
	html: string;
	attachments: InlineAttachment[];
}

export const CHART_CID = 'worst-ratio-chart@lockstep';
/** Longer lists are cut here, with a link to the full list in Lockstep: a digest is read in minutes. */
export const MAX_ROWS = 30;

export function renderDigest(
	d: DigestData,
	o: { kind: 'digest' | 'weekly'; displayName: string; timeZone: string; scopeLabel: string; unsubscribeUrl: string }
): RenderedMail {
	const when = (t: number) => formatInZone(t, o.timeZone, { weekday: 'short', day: 'numeric', month: 'short', hour: '2-digit', minute: '2-digit' });
	const day = formatInZone(d.to, o.timeZone, { weekday: 'short', day: 'numeric', month: 'short' });
	const title = o.kind === 'weekly' ? 'Weekly summary' : 'Morning digest';
	const open = openAlarmCount(d);
	const older = d.openByAge.slice(2).reduce((s, b) => s + b.count, 0);
	const subject = `Lockstep ${o.kind === 'weekly' ? 'weekly summary' : 'digest'} ${day}: ${plural(d.flagged.length, 'chamber')} apart from the fleet, ${plural(open, 'open alarm')}`;
	const period = `${when(d.from)} → ${when(d.to)} (${o.timeZone})`;
	const headline = [
		plural(d.waferSteps, 'wafer-step') + ' scored',
		plural(d.alarmsOpened, 'alarm') + ' opened',
		plural(d.flagged.length, 'chamber') + ' apart from the fleet',
		`${plural(open, 'open alarm')}${older ? ` (${older} older than 24 h)` : ''}`,
		plural(d.acknowledged.length, 'acknowledgement'),
		plural(d.requalify.length, 'chamber') + ' awaiting requalification',
		plural(d.maintenance.length, 'maintenance event')
	];
	const peak = d.hourly.reduce<{ hourAt: number; worst: number } | null>((m, p) => (p.worst !== null && (!m || p.worst > m.worst) ? { hourAt: p.hourAt, worst: p.worst } : m), null);
	const peakText = peak ? `Highest: ${ratio(peak.worst)} at ${when(peak.hourAt)}.` : 'No wafer-steps were scored in this period.';
	const leak = d.leakGases.length ? leakReminder(d.leakGases) : null;
	const topText = (t: { feature: string; share: number | null }[]) => t.map((f) => (f.share === null ? featureLabel(f.feature) : `${featureLabel(f.feature)} ${Math.round(f.share * 100)} %`)).join(', ');

	// ── HTML ──
	const H: string[] = [];
	if (leak) H.push(notice(leak.title, esc(leak.body)));
	H.push(
		`<tr><td style="padding:14px 24px 0 24px;font-family:Arial,Helvetica,sans-serif;font-size:13px;line-height:20px;color:${C.ink2}">${headline.map(esc).join(' · ')}</td></tr>`
	);
	const svg = worstRatioChartSvg(d.hourly, { timeZone: o.timeZone });
	H.push(
		section(
			'Worst ratio in the fleet, per hour',
			`<img src="cid:${CHART_CID}" width="560" height="180" alt="Line chart: the highest T² or Q ratio to its limit among the chambers in scope, hour by hour; 1.00 is the limit. ${esc(peakText)}" style="display:block;width:100%;max-width:560px;height:auto;border:1px solid ${C.line}">
<p style="margin:4px 0 0 0;font-size:12px;color:${C.ink3}">Ratio = statistic ÷ its control limit (T² or Q, whichever is larger); above 1.00 is beyond the limit. ${esc(peakText)}</p>`,
			''
		)
	);
	H.push(
		section(
			'Apart from the fleet',
			table(
				['Chamber', 'Recipe / step', 'Modified z', 'Features that set it apart'],
				d.flagged.map((f) => [
					link(mailLinks.chamber(f.chamberCode), f.chamberCode),
					link(mailLinks.fleetStep(f.recipeStepId), f.recipeStep),
					esc(f.modifiedZ.toFixed(1)),
					esc(f.separating.map(featureLabel).join(', ') || '—') + (f.leakGases.length ? ` <strong style="color:${C.warn}">leak-like</strong>` : '')
				]),
				[2]
			),
			'No chamber was flagged by fleet matching in this period.',
			'Latest fleet-matching run in the period; |modified z| above 3.5 flags a chamber.'
		)
	);
	H.push(
		section(
			'Open alarms by age',
			table(
				['Age', 'Chamber', 'Rule', 'Worst ratio', 'Wafers', 'Leading features', ''],
				d.openAlarms.map((a) => [
					esc(age(a.ageHours)),
					esc(a.chamberCode) + `<br><span style="color:${C.ink3};font-size:12px">${esc(a.recipeStep)}</span>`,
					esc(a.rule) + (a.severity === 'alarm' ? ` <strong style="color:${C.alarm}">alarm</strong>` : ` <span style="color:${C.warn}">warning</span>`),
					esc(ratio(a.worstRatio)),
					esc(a.waferCount),
					esc(topText(a.facts.top) || '—') + (a.facts.leakGases.length ? ` <strong style="color:${C.warn}">leak-like</strong>` : ''),
					link(mailLinks.alarm(a.id), 'Open')
				]),
				[3, 4]
			),
			'No open alarms.',
			esc(d.openByAge.map((b) => `${b.label}: ${b.count}`).join(' · ')) +
				(d.acknowledgedLive ? esc(` · acknowledged, not closed: ${d.acknowledgedLive}`) : '') +
				(open > d.openAlarms.length ? ` · the oldest ${d.openAlarms.length} are listed, ${link(mailLinks.openAlarms(), 'all open alarms')}` : '')
		)
	);
	H.push(
		section(
			'Acknowledged since the last digest',
			table(
				['When', 'Chamber', 'Rule', 'Cause', 'Recommendation', 'By'],
				d.acknowledged.slice(-MAX_ROWS).map((a) => [
					esc(when(a.at)),
					link(mailLinks.alarm(a.alarmId), a.chamberCode),
					esc(a.rule),
					a.causeCode ? `<strong>${esc(a.causeCode)}</strong> ${esc(a.causeTitle ?? '')}` : '—',
					esc(a.disposition ?? '—') + (a.comment ? `<br><span style="color:${C.ink3};font-size:12px">“${esc(a.comment.slice(0, 200))}”</span>` : ''),
					esc(a.userName ?? '—')
				])
			),
			'No alarm was acknowledged in this period.',
			d.acknowledged.length > MAX_ROWS ? `The last ${MAX_ROWS} of ${d.acknowledged.length} are listed; ${link(mailLinks.alarmsAcknowledged(), 'all acknowledged alarms')}.` : undefined
		)
	);
	H.push(
		section(
			'Awaiting requalification',
			table(
				['Chamber', 'Since', 'After'],
				d.requalify.map((r) => [link(mailLinks.baselines(r.chamberCode), r.chamberCode), esc(when(r.since)), esc(r.reason ?? '—')])
			),
			'No chamber is waiting for requalification.',
			'New baselines are needed before these chambers’ scores mean what they did before the work.'
		)
	);
	H.push(
		section(
			'Five worst wafer-steps',
			table(
				['Wafer', 'Chamber', 'Recipe / step', 'Processed', 'Worst', 'T²', 'Q'],
				d.worstWaferSteps.map((w) => [
					link(mailLinks.wafer(w.waferStepId), w.waferId) + `<br><span style="color:${C.ink3};font-size:12px">lot ${esc(w.lotId)}${w.seasoning ? ' · seasoning' : ''}</span>`,
					esc(w.chamberCode),
					esc(w.recipeStep),
					esc(when(w.processedAt)),
					`<strong>${esc(ratio(w.worstRatio))}</strong>`,
					esc(ratio(w.t2Ratio)),
					esc(ratio(w.qRatio))
				]),
				[4, 5, 6]
			),
			'No wafer-steps were scored in this period.'
		)
	);
	H.push(
		section(
			'Maintenance done',
			table(
				['When', 'Chamber', 'Work', 'By', 'Note'],
				d.maintenance.slice(-MAX_ROWS).map((m) => [esc(when(m.at)), esc(m.chamberCode), esc(m.kind), esc(m.userName ?? '—'), esc((m.comment ?? '').slice(0, 200) || '—')])
			),
			'No maintenance was logged in this period.',
			d.maintenance.length > MAX_ROWS ? `The last ${MAX_ROWS} of ${d.maintenance.length} are listed; ${link(mailLinks.maintenance(), 'the maintenance log')}.` : undefined
		)
	);
	H.push(notice('Recommendations only', esc(RECOMMENDATION_NOTE), 'info'));
	const footer = `For ${esc(o.displayName)}, covering ${esc(o.scopeLabel)}. ${link(mailLinks.home(), 'Open Lockstep')} · ${link(mailLinks.mailSettings(), 'Mail settings')} · ${link(o.unsubscribeUrl, o.kind === 'weekly' ? 'Unsubscribe from weekly summaries' : 'Unsubscribe from morning digests')}`;
	const html = page({ preheader: headline.slice(2, 4).join(', '), title, subtitle: esc(period), body: H.join('\n'), footer });

	// ── Text: the same content, line by line ──
	const T: string[] = [];
	const head = (s: string) => T.push('', s, '-'.repeat(s.length));
	T.push(`LOCKSTEP — ${title.toUpperCase()}`, period, '');
	if (leak) T.push(`!! ${leak.title}`, `   ${leak.body}`, '');
	T.push(headline.join(' · '));
	head('Worst ratio in the fleet, per hour');
	T.push('(chart in the HTML version) ' + peakText);
	head('Apart from the fleet');
	if (!d.flagged.length) T.push('No chamber was flagged by fleet matching in this period.');
	for (const f of d.flagged)
		T.push(`* ${f.chamberCode}  ${f.recipeStep}  modified z ${f.modifiedZ.toFixed(1)}  features: ${f.separating.map(featureLabel).join(', ') || '—'}${f.leakGases.length ? '  [leak-like]' : ''}`, `  ${mailLinks.chamber(f.chamberCode)}`);
	head('Open alarms by age');
	T.push(d.openByAge.map((b) => `${b.label}: ${b.count}`).join(' · ') + (d.acknowledgedLive ? ` · acknowledged, not closed: ${d.acknowledgedLive}` : ''));
	if (!d.openAlarms.length) T.push('No open alarms.');
	for (const a of d.openAlarms)
		T.push(
			`* ${age(a.ageHours)}  ${a.chamberCode}  ${a.recipeStep}  ${a.rule} (${a.severity})  worst ${ratio(a.worstRatio)}  ${plural(a.waferCount, 'wafer')}${a.facts.top.length ? `  leading: ${topText(a.facts.top)}` : ''}${a.facts.leakGases.length ? '  [leak-like]' : ''}`,
			`  ${mailLinks.alarm(a.id)}`
		);
	if (open > d.openAlarms.length) T.push(`(the oldest ${d.openAlarms.length} of ${open}; all: ${mailLinks.openAlarms()})`);
	head('Acknowledged since the last digest');
	if (!d.acknowledged.length) T.push('No alarm was acknowledged in this period.');
	if (d.acknowledged.length > MAX_ROWS) T.push(`(the last ${MAX_ROWS} of ${d.acknowledged.length}; all: ${mailLinks.alarmsAcknowledged()})`);
	for (const a of d.acknowledged.slice(-MAX_ROWS))
		T.push(
			`* ${when(a.at)}  ${a.chamberCode}  ${a.rule}  cause ${a.causeCode ?? '—'} ${a.causeTitle ?? ''}  → ${a.disposition ?? '—'}  by ${a.userName ?? '—'}${a.comment ? `  “${a.comment.slice(0, 200)}”` : ''}`,
			`  ${mailLinks.alarm(a.alarmId)}`
		);
	head('Awaiting requalification');
	if (!d.requalify.length) T.push('No chamber is waiting for requalification.');
	for (const r of d.requalify) T.push(`* ${r.chamberCode}  since ${when(r.since)}  after ${r.reason ?? '—'}  ${mailLinks.baselines(r.chamberCode)}`);
	head('Five worst wafer-steps');
	if (!d.worstWaferSteps.length) T.push('No wafer-steps were scored in this period.');
	for (const w of d.worstWaferSteps)
		T.push(
			`* ${w.waferId} (lot ${w.lotId}${w.seasoning ? ', seasoning' : ''})  ${w.chamberCode}  ${w.recipeStep}  ${when(w.processedAt)}  worst ${ratio(w.worstRatio)}  T² ${ratio(w.t2Ratio)}  Q ${ratio(w.qRatio)}`,
			`  ${mailLinks.wafer(w.waferStepId)}`
		);
	head('Maintenance done');
	if (!d.maintenance.length) T.push('No maintenance was logged in this period.');
	if (d.maintenance.length > MAX_ROWS) T.push(`(the last ${MAX_ROWS} of ${d.maintenance.length}; all: ${mailLinks.maintenance()})`);
	for (const m of d.maintenance.slice(-MAX_ROWS)) T.push(`* ${when(m.at)}  ${m.chamberCode}  ${m.kind}  by ${m.userName ?? '—'}${m.comment ? `  “${m.comment.slice(0, 200)}”` : ''}`);
	T.push('', RECOMMENDATION_NOTE, '', `For ${o.displayName}, covering ${o.scopeLabel}.`, `Open Lockstep: ${mailLinks.home()}`, `Mail settings: ${mailLinks.mailSettings()}`, `Unsubscribe: ${o.unsubscribeUrl}`);

	return {
		subject,
		text: T.join('\n') + '\n',
		html,
		attachments: [{ cid: CHART_CID, filename: 'worst-ratio.svg', contentType: 'image/svg+xml', content: svg }]
	};
}
