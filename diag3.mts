import { XSadd as XSAdd } from 'ml-xsadd';
import { designRules, evaluateRules } from './src/lib/monitoring/alarm-rules.ts';
import { chiSquareUpper, sampleAutocorrelation } from './src/lib/monitoring/index.ts';
function gauss(r){const u=Math.max(r.random(),1e-12);return Math.sqrt(-2*Math.log(u))*Math.cos(2*Math.PI*r.random());}
const h=3, alpha=0.01, q=chiSquareUpper(alpha,h);
const policy={falseAlarmsPer10k:80,singleEnabled:false,runEnabled:false,runK:3,runM:5,ewmaEnabled:true,ewmaLambda:0.2};
const design=designRules(policy); console.log('design ARL', design.driftArl, 'L', design.driftL);
for (const phi of [0, 0.35, 0.7]) {
 const rng=new XSAdd(42); let off=[0,0,0]; let c=0;
 const next=()=>{ if(c%25===0) off=off.map(()=>phi*gauss(rng)); c++; let s=0; for(let j=0;j<h;j++){ const x=(off[j]+gauss(rng))/Math.sqrt(1+phi*phi); s+=x*x;} return s/q; };
 // reference from a long in-control series
 const long=Array.from({length:20000},next); const mean=long.reduce((a,b)=>a+b,0)/long.length; const sd=Math.sqrt(long.reduce((a,b)=>a+(b-mean)**2,0)/(long.length-1));
 const acf=Array.from(sampleAutocorrelation(Float64Array.from(long),25));
 const base={alpha, shape:{t2:h,q:h}, drift:{t2:{mean,sd,acf},q:{mean,sd,acf},n:20000}};
 const rls=[];
 for (let run=0; run<150; run++){
   const hist=[]; let t=0;
   // warm start: 50 in-control points as history
   for(let i=0;i<50;i++){ const r=next(); hist.push({waferStepId:i,processedAt:i,t2:0,q:0,t2Ratio:r,qRatio:next(),worstRatio:1}); }
   for(;;){ t++; const p={waferStepId:1e6+t,processedAt:1e6+t,t2:0,q:0,t2Ratio:next(),qRatio:next(),worstRatio:1};
     const v=evaluateRules(hist.slice(-50),[p],base,policy,design); hist.push(p); if(v.length) break; if(t>20000) break; }
   rls.push(t);
 }
 const arl=rls.reduce((a,b)=>a+b,0)/rls.length;
 console.log(`phi ${phi}: ARL (both charts) ${arl.toFixed(0)} → per chart ≈ ${(2*arl).toFixed(0)} (design ${design.driftArl}); acf1 ${acf[0].toFixed(2)}`);
}
