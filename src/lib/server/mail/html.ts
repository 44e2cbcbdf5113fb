/**
 * Building blocks for mail HTML: escaping and a few inline-styled pieces. Mail clients ignore <style>
 * blocks and external CSS unevenly, so every element carries its own style, and layout is tables.
 */
export function esc(s: unknown): string {
	return String(s ?? '')
		.replace(/&/g, '&amp;')
		.replace(/</g, '&lt;')
		.replace(/>/g, '&gt;')
		.replace(/"/g, '&quot;')
		.replace(/'/g, '&#39;');
}

export const C = {
	ink: '#131920',
	ink2: '#434e59',
	ink3: '#5f6b77',
	line: '#d3dae1',
	panel: '#ffffff',
	page: '#f3f5f7',
	head: '#eef1f4',
	accent: '#6f35c8',
	alarm: '#bf1f45',
	alarmSoft: '#f9e6ea',
	warn: '#8a5800',
	warnSoft: '#f4eee2',
	ok: '#086e69'
};

const FONT = "font-family:Arial,Helvetica,sans-serif;";

export function link(href: string, text: string): string {
	return `<a href="${esc(href)}" style="color:${C.accent};text-decoration:underline">${esc(text)}</a>`;
}

/** A section: heading, optional lead sentence, then the body HTML (or the empty text). */
export function section(title: string, body: string | null, empty: string, lead?: string): string {
	return `<tr><td style="padding:18px 24px 4px 24px;${FONT}">
<h2 style="margin:0 0 6px 0;font-size:16px;line-height:22px;color:${C.ink}">${esc(title)}</h2>
${lead ? `<p style="margin:0 0 8px 0;font-size:13px;line-height:19px;color:${C.ink2}">${lead}</p>` : ''}
${body ?? `<p style="margin:0;font-size:13px;line-height:19px;color:${C.ink3}">${esc(empty)}</p>`}
</td></tr>`;
}

/** A data table; cells are HTML (escape before). */
export function table(headers: string[], rows: string[][], numeric: number[] = []): string | null {
	if (!rows.length) return null;
	const th = headers
		.map((h, i) => `<th align="${numeric.includes(i) ? 'right' : 'left'}" style="padding:5px 8px;font-size:12px;font-weight:bold;color:${C.ink2};background:${C.head};border-bottom:1px solid ${C.line}">${esc(h)}</th>`)
		.join('');
	const tr = rows
		.map(
			(r) =>
				`<tr>${r.map((c, i) => `<td align="${numeric.includes(i) ? 'right' : 'left'}" valign="top" style="padding:5px 8px;font-size:13px;line-height:18px;color:${C.ink};border-bottom:1px solid ${C.line}">${c}</td>`).join('')}</tr>`
		)
		.join('\n');
	return `<table role="presentation" width="100%" cellpadding="0" cellspacing="0" style="border-collapse:collapse;${FONT}"><thead><tr>${th}</tr></thead><tbody>${tr}</tbody></table>`;
}

export function notice(title: string, body: string, tone: 'warn' | 'info' = 'warn'): string {
	const [fg, bg] = tone === 'warn' ? [C.warn, C.warnSoft] : [C.accent, C.head];
	return `<tr><td style="padding:14px 24px 0 24px;${FONT}"><table role="presentation" width="100%" cellpadding="0" cellspacing="0" style="border-collapse:collapse"><tr><td style="border-left:4px solid ${fg};background:${bg};padding:10px 12px;font-size:13px;line-height:19px;color:${C.ink}"><strong style="color:${fg}">${esc(title)}</strong><br>${body}</td></tr></table></td></tr>`;
}

/** The whole mail: a 640-px panel on a grey page, the wordmark on top, the footer below. */
export function page(opts: { preheader: string; title: string; subtitle: string; body: string; footer: string }): string {
	return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width,initial-scale=1"><meta name="color-scheme" content="light"><title>${esc(opts.title)}</title></head>
<body style="margin:0;padding:0;background:${C.page}">
<span style="display:none;max-height:0;overflow:hidden;opacity:0">${esc(opts.preheader)}</span>
<table role="presentation" width="100%" cellpadding="0" cellspacing="0" style="background:${C.page}"><tr><td align="center" style="padding:20px 8px">
<table role="presentation" width="640" cellpadding="0" cellspacing="0" style="width:100%;max-width:640px;background:${C.panel};border:1px solid ${C.line};border-radius:8px;border-collapse:separate">
<tr><td style="padding:18px 24px 14px 24px;border-bottom:3px solid ${C.accent};${FONT}">
<div style="font-size:12px;letter-spacing:2px;text-transform:uppercase;color:${C.accent};font-weight:bold">Lockstep</div>
<h1 style="margin:4px 0 2px 0;font-size:20px;line-height:26px;color:${C.ink}">${esc(opts.title)}</h1>
<div style="font-size:13px;line-height:19px;color:${C.ink2}">${opts.subtitle}</div>
</td></tr>
${opts.body}
<tr><td style="padding:18px 24px 20px 24px;border-top:1px solid ${C.line};${FONT}font-size:12px;line-height:18px;color:${C.ink3}">${opts.footer}</td></tr>
</table></td></tr></table>
</body></html>`;
}
