/**
 * The SMTP transport, from the SMTP_* settings (../config.ts). Production points them at the fab's
 * relay (STARTTLS when it offers it, or SMTP_SECURE=true for implicit TLS on 465). On a loopback host
 * without TLS — the local sink in development, the demo and tests — STARTTLS is not attempted: the
 * sink's bundled certificate has expired and nothing leaves the machine.
 */
import nodemailer, { type Transporter } from 'nodemailer';
import { config } from '../config.ts';
import { isLoopback } from './env.ts';

export type SmtpSettings = typeof config.smtp;

export function createMailTransport(smtp: SmtpSettings = config.smtp, timeouts = { connectMs: 10_000, socketMs: 30_000 }): Transporter {
	return nodemailer.createTransport({
		host: smtp.host,
		port: smtp.port,
		secure: smtp.secure,
		ignoreTLS: !smtp.secure && isLoopback(smtp.host),
		auth: smtp.user ? { user: smtp.user, pass: smtp.pass ?? '' } : undefined,
		connectionTimeout: timeouts.connectMs,
		greetingTimeout: timeouts.connectMs,
		socketTimeout: timeouts.socketMs
	});
}

/** The domain of the From address, for Message-IDs. */
export function fromDomain(from: string = config.smtp.from): string {
	const m = /@([A-Za-z0-9.-]+)>?\s*$/.exec(from);
	return m ? m[1] : 'lockstep.invalid';
}
