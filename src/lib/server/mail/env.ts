/**
 * Mail settings that come from the environment, beside the SMTP ones in ../config.ts:
 * - LOCKSTEP_SECRET — the key that signs unsubscribe links (a random one is generated and kept in the
 *   settings table when unset, see secret.ts);
 * - LOCKSTEP_MAIL_SINK — `on`, `off`, or unset = `auto`: the local SMTP sink starts with the jobs when
 *   SMTP_HOST is unset or a loopback address, i.e. in development, the demo and tests. Production points
 *   SMTP_HOST at the fab's relay and the sink stays off.
 */
import { config } from '../config.ts';

export type SinkMode = 'on' | 'off' | 'auto';

export function sinkMode(env: NodeJS.ProcessEnv = process.env): SinkMode {
	const v = (env.LOCKSTEP_MAIL_SINK ?? 'auto').trim().toLowerCase();
	if (v === 'on' || v === 'off' || v === 'auto') return v;
	throw new Error(`LOCKSTEP_MAIL_SINK must be on, off or auto, got "${env.LOCKSTEP_MAIL_SINK}"`);
}

export function isLoopback(host: string): boolean {
	return host === 'localhost' || host === '::1' || /^127\.\d+\.\d+\.\d+$/.test(host);
}

/** Whether this process should run the local sink on the SMTP port. */
export function sinkWanted(env: NodeJS.ProcessEnv = process.env, smtpHost = config.smtp.host): boolean {
	const mode = sinkMode(env);
	if (mode === 'auto') return isLoopback(smtpHost);
	return mode === 'on';
}

export function envSecret(env: NodeJS.ProcessEnv = process.env): string | null {
	const s = env.LOCKSTEP_SECRET?.trim();
	if (!s) return null;
	if (s.length < 16) throw new Error('LOCKSTEP_SECRET must be at least 16 characters');
	return s;
}

/** Where links in mails point: ORIGIN (the address users reach Lockstep at). */
export function mailOrigin(): string {
	return (config.origin ?? 'http://localhost:3000').replace(/\/+$/, '');
}
