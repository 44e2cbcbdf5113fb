/**
 * `npm start` — the production web server: SvelteKit's adapter-node request handler (build/handler.js)
 * behind Node's own HTTP server, instead of adapter-node's ready-made build/index.js, for what the
 * ready-made one cannot do:
 *
 * - the security headers on every answer (but a 304), including the static files (served by adapter-node before
 *   any SvelteKit hook runs) and SvelteKit's own early answers (the 403 of its cross-site form check):
 *   no-sniff, no framing, no referrer off-site, a restrictive default Content-Security-Policy. A page's
 *   own headers (set in hooks.server.ts, and the page CSP SvelteKit computes) replace these defaults.
 * - a located, readable answer when a request cannot be parsed: headers over the limit get 431 with
 *   a JSON body saying which limit, malformed requests 400 — Node's default is an empty reply.
 * - one process on purpose: upload progress and rescore tasks live in the process that runs them
 *   (src/lib/server/tasks.ts, ingest/progress.ts), so a second process behind a round-robin would
 *   answer their polls with "unknown".
 *
 * Plain JavaScript (no tsx) so the server starts with nothing but Node and the build. Environment as
 * adapter-node's: HOST (default 127.0.0.1 here — loopback unless told; set 0.0.0.0 to serve the network), PORT (3000), ORIGIN, BODY_SIZE_LIMIT, SHUTDOWN_TIMEOUT (30 s),
 * KEEP_ALIVE_TIMEOUT, HEADERS_TIMEOUT (s); also LOCKSTEP_MAX_HEADER_KB (16).
 * SIGTERM / SIGINT stop taking connections, let requests in flight finish, then close the database.
 */
import http from 'node:http';
import fs from 'node:fs';
import path from 'node:path';
import process from 'node:process';
import { fileURLToPath } from 'node:url';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const handlerFile = path.join(root, 'build', 'handler.js');
if (!fs.existsSync(handlerFile)) {
	console.error('build/handler.js is missing: run `npm run build` first.');
	process.exit(1);
}
// Plain-HTTP default for ORIGIN, set before adapter-node's handler reads it at import: without it
// adapter-node assumes https://<Host>, so SvelteKit refuses the sign-in POST as cross-site (403) on a
// fresh clone's `npm start`. Behind a TLS proxy set ORIGIN to the public address (README).
const listenHost = process.env.HOST ?? '127.0.0.1';
const listenPort = Number(process.env.PORT ?? 3000);
if (!process.env.ORIGIN && !process.env.PROTOCOL_HEADER && !process.env.HOST_HEADER) {
	const shown = listenHost === '0.0.0.0' || listenHost === '::' ? '127.0.0.1' : listenHost.includes(':') ? `[${listenHost}]` : listenHost;
	process.env.ORIGIN = `http://${shown}:${listenPort}`;
	console.log(`ORIGIN not set: using ${process.env.ORIGIN} (set ORIGIN to the address people type)`);
}
const { handler } = await import(handlerFile);

/** Defaults for every answer; a page's own values (hooks.server.ts, kit.csp) replace them. */
export const DEFAULT_HEADERS = {
	'x-content-type-options': 'nosniff',
	'x-frame-options': 'DENY',
	'referrer-policy': 'same-origin',
	'content-security-policy': "default-src 'none'; style-src 'self'; img-src 'self'; font-src 'self'; frame-ancestors 'none'; base-uri 'none'; form-action 'self'"
};

const num = (name, fallback) => {
	const raw = process.env[name];
	if (raw === undefined || raw === '') return fallback;
	const v = Number(raw);
	if (!Number.isFinite(v) || v < 0) throw new Error(`${name} must be a non-negative number, got "${raw}"`);
	return v;
};
const host = listenHost;
const port = listenPort;
const maxHeaderKb = num('LOCKSTEP_MAX_HEADER_KB', 16);
const shutdownS = num('SHUTDOWN_TIMEOUT', 30);

/**
 * Add the defaults a response has not set itself, just before its head is written. Not on a 304: a
 * browser merges a 304's headers into its cached response, and the default CSP would replace the
 * page's own (SvelteKit answers 304 to a page whose ETag the browser already has).
 */
function withDefaults(res) {
	const writeHead = res.writeHead;
	res.writeHead = function (status, ...rest) {
		for (const [k, v] of Object.entries(DEFAULT_HEADERS)) if (status !== 304 && !this.hasHeader(k)) this.setHeader(k, v);
		return writeHead.call(this, status, ...rest);
	};
}

const server = http.createServer({ maxHeaderSize: Math.round(maxHeaderKb * 1024) }, (req, res) => {
	withDefaults(res);
	handler(req, res, () => {
		// adapter-node calls next() only when nothing answered: a plain 404.
		res.statusCode = 404;
		res.setHeader('content-type', 'text/plain; charset=utf-8');
		res.end('Not found');
	});
});
const keepAlive = num('KEEP_ALIVE_TIMEOUT', NaN);
if (Number.isFinite(keepAlive)) server.keepAliveTimeout = keepAlive * 1000;
const headersTimeout = num('HEADERS_TIMEOUT', NaN);
if (Number.isFinite(headersTimeout)) server.headersTimeout = headersTimeout * 1000;

/** Answer a request Node could not parse with a status and a JSON reason, then close the socket. */
function refuse(socket, status, reason, error) {
	if (!socket.writable) return socket.destroy();
	const body = JSON.stringify({ error, status });
	const head = [
		`HTTP/1.1 ${status} ${reason}`,
		'content-type: application/json',
		`content-length: ${Buffer.byteLength(body)}`,
		...Object.entries(DEFAULT_HEADERS).map(([k, v]) => `${k}: ${v}`),
		'connection: close'
	];
	socket.end(`${head.join('\r\n')}\r\n\r\n${body}`);
}

server.on('clientError', (err, socket) => {
	// A connection reset, or a response already under way on this socket: nothing can be said any more.
	if (err.code === 'ECONNRESET' || !socket.writable || socket._httpMessage?.headersSent) return socket.destroy();
	if (err.code === 'HPE_HEADER_OVERFLOW')
		return refuse(socket, 431, 'Request Header Fields Too Large', `headers: the request's headers exceed ${maxHeaderKb} KB (the server's limit); send fewer or shorter headers or cookies`);
	if (err.code === 'ERR_HTTP_REQUEST_TIMEOUT') return refuse(socket, 408, 'Request Timeout', 'request: the request was not received in time');
	refuse(socket, 400, 'Bad Request', `request: not a well-formed HTTP request (${err.code ?? 'parse error'})`);
});

server.listen({ host, port }, () => {
	const a = server.address();
	console.log(`Listening on http://${typeof a === 'object' && a ? `${a.address}:${a.port}` : `${host}:${port}`}`);
});

let stopping = null;
function shutdown(reason) {
	if (stopping) return;
	server.closeIdleConnections();
	server.close(() => {
		clearTimeout(stopping);
		// hooks.server.ts closes the database on this event (as adapter-node's own server emits it).
		process.emit('sveltekit:shutdown', reason);
	});
	stopping = setTimeout(() => server.closeAllConnections(), shutdownS * 1000);
	stopping.unref();
}
// Requests in flight after a stop signal: close each connection as soon as it is idle.
server.on('request', (req) => {
	req.on('close', () => {
		if (stopping) server.closeIdleConnections();
	});
});
process.on('SIGTERM', () => shutdown('SIGTERM'));
process.on('SIGINT', () => shutdown('SIGINT'));
