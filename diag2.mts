import fs from 'node:fs'; import os from 'node:os'; import path from 'node:path';
import { closeDb, migrateLatest, openDb, setDb } from './src/lib/server/db.ts';
import { createUser } from './src/lib/server/users.ts';
import { buildVolumeFab, runHours } from './tests/helpers/volume-fab.ts';
const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lv-'));
const k = openDb({ client: 'better-sqlite3', filename: path.join(dir, 'v.sqlite'), connectionString: null });
await migrateLatest(k); setDb(k);
const a = (await createUser({ username: 'va', displayName: 'A', password: 'volume-pass-a', role: 'engineer' })).id;
const fab = await buildVolumeFab(k, { chambers: 6, steps: [12, 40], wafersPerHour: 20, hours: 24, golden: 100, seed: 1 }, [a, a]);
await runHours(k, fab, 24, 20);
for (const al of await k('alarms').select()) {
  const idx = await k('wafer_steps').where({chamber_id: al.chamber_id, recipe_step_id: al.recipe_step_id}).andWhere('processed_at','<=',al.opened_at).count({n:'*'}).first();
  console.log(al.id, al.rule, al.chamber_id, al.recipe_step_id, al.state, al.wafer_count, 'idx', idx.n, al.detail_json);
}
for (const b of await k('baselines').select('id','summary_json')) { const r = JSON.parse(b.summary_json).ewmaReference; console.log(b.id, r.acfSource, r.n, r.t2.mean.toFixed(3), r.t2.sd.toFixed(3), r.q.mean.toFixed(3), r.q.sd.toFixed(3), (r.t2.acf||[]).slice(0,3).map(x=>x.toFixed(2)).join(','), (r.q.acf||[]).slice(0,3).map(x=>x.toFixed(2)).join(',')); }
const al = await k('alarms').where({id:1}).first();
const sc = await k('scores').where({chamber_id: al.chamber_id, recipe_step_id: al.recipe_step_id}).andWhere('processed_at','<=',al.opened_at).orderBy('processed_at').select('q_ratio','t2_ratio');
console.log(sc.slice(-25).map(s=>s.q_ratio.toFixed(2)).join(' '));
for (const b of await k('baselines').select('id','chamber_id','recipe_step_id','summary_json')) {
 const r = await k('scores').where({chamber_id:b.chamber_id, recipe_step_id:b.recipe_step_id}).avg({q:'q_ratio', t:'t2_ratio'}).count({n:'*'}).first();
 const r1 = await k('scores').where({chamber_id:b.chamber_id, recipe_step_id:b.recipe_step_id}).orderBy('processed_at').limit(50).select('q_ratio');
 const ref = JSON.parse(b.summary_json).ewmaReference;
 console.log(b.id, 'n', r.n, 'mean q', r.q.toFixed(3), 'ref', ref.q.mean.toFixed(3), 'first50', (r1.reduce((s,x)=>s+x.q_ratio,0)/50).toFixed(3), 'mean t2', r.t.toFixed(3), 'ref', ref.t2.mean.toFixed(3));
}
await closeDb();
