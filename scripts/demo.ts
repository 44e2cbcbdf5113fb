/**
 * `npm run demo`: the one command that runs Lockstep on the embedded SQLite default —
 * migrate, seed the demo fab when the database is empty, build, then serve on 127.0.0.1 and run the
 * scheduled jobs beside the web server. Ctrl-C stops both.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';

const host = process.env.HOST ?? '127.0.0.1';
const port = process.env.PORT ?? '3000';
const origin = process.env.ORIGIN ?? `http://${host}:${port}`;
// Uploads are limited by Lockstep itself (LOCKSTEP_UPLOAD_LIMIT_MB), streamed to disk: adapter-node's
// own 512 kB body limit would refuse them first.
const env = { ...process.env, HOST: host, PORT: port, ORIGIN: origin, BODY_SIZE_LIMIT: process.env.BODY_SIZE_LIMIT ?? 'Infinity' };

function step(title: string, cmd: string, args: string[]) {
	console.log(`\n▸ ${title}`);
	const r = spawnSync(cmd, args, { stdio: 'inherit', env });
	if (r.status !== 0) {
		console.error(`✗ ${title} failed (exit ${r.status})`);
		process.exit(r.status ?? 1);
	}
}

step('Migrating and seeding the demo fab (first start only)', process.execPath, ['--import', 'tsx', 'seeds/run.ts']);
if (process.env.LOCKSTEP_SKIP_BUILD !== '1' || !fs.existsSync('build/index.js'))
	step('Building', process.execPath, ['node_modules/vite/bin/vite.js', 'build', '--logLevel', 'warn']);

const children: ChildProcess[] = [];
children.push(spawn(process.execPath, ['scripts/serve.js'], { stdio: 'inherit', env }));
if (fs.existsSync('jobs/run.ts')) children.push(spawn(process.execPath, ['--import', 'tsx', 'jobs/run.ts'], { stdio: 'inherit', env }));
console.log(`\n▸ Lockstep is at ${origin}  (jobs: ${children.length > 1 ? 'running' : 'none'}; Ctrl-C stops)`);

let stopping = false;
function stop(signal: NodeJS.Signals) {
	if (stopping) return;
	stopping = true;
	for (const c of children) c.kill(signal);
	setTimeout(() => process.exit(0), 5000).unref();
}
process.on('SIGINT', () => stop('SIGTERM'));
process.on('SIGTERM', () => stop('SIGTERM'));
for (const c of children)
	c.on('exit', (code) => {
		if (!stopping) {
			console.error(`a Lockstep process exited (code ${code}); stopping`);
			stop('SIGTERM');
			process.exitCode = code ?? 1;
		}
	});
