/**
 * The qualification job, every minute: finish campaign drafts and rescores that a stopped process
 * left (claims past their lease), then propose the requalification baselines that are due after wet
 * cleans. Proposals are drafts for an engineer to review; nothing is approved here.
 */
import { runDrafts, runRescores } from '../src/lib/server/qualification-runner.ts';
import { proposeRequalifications } from '../src/lib/server/requalification.ts';

export async function runQualificationJob(): Promise<void> {
	const drafted = await runDrafts(null);
	const rescored = await runRescores(null);
	const proposed = await proposeRequalifications();
	if (drafted || rescored || proposed.length)
		console.log(`jobs: qualifications: ${drafted} drafts fitted, ${rescored} chamber × steps rescored, ${proposed.length} requalification proposals (${proposed.map((id) => `#${id}`).join(', ') || 'none'})`);
}
