import { XSadd as XSAdd } from 'ml-xsadd';
import { fitBaseline, scoreBatch, crossValidatedScores, sampleAutocorrelation } from './src/lib/monitoring/index.ts';
import { ratioShape, ratioScale } from './src/lib/monitoring/drift.ts';
function gauss(r){const u=Math.max(r.random(),1e-12);return Math.sqrt(-2*Math.log(u))*Math.cos(2*Math.PI*r.random());}
for (const p of [12,40]) for (const lotsd of [0, 0.35]) {
 const loads=new XSAdd(1000); const W=[0,1,2].map(()=>Array.from({length:p},()=>loads.random()*2-1));
 const agg={t2:[],q:[],zt:[],zq:[],h:[],acf:[]};
 for (let rep=0; rep<20; rep++){
 const rng=new XSAdd(rep+7); let off=[0,0,0]; let inLot=0;
 const row=()=>{ if(inLot===0) off=[0,1,2].map(()=>lotsd*gauss(rng)); inLot=(inLot+1)%25; const f=off.map(o=>o+gauss(rng)); const x=new Float64Array(p); for(let j=0;j<p;j++) x[j]=10+f[0]*W[0][j]+f[1]*W[1][j]+f[2]*W[2][j]+0.1*gauss(rng); return x;};
 const g=Array.from({length:100},row);
 const m=fitBaseline(g,{featureNames:Array.from({length:p},(_,j)=>'f'+j),components:3});
 const cv=crossValidatedScores(g,m,5);
 const mean=a=>a.reduce((s,x)=>s+x,0)/a.length; const sd=a=>{const mu=mean(a);return Math.sqrt(a.reduce((s,x)=>s+(x-mu)**2,0)/(a.length-1));};
 const ht=ratioShape(mean([...cv.t2Ratio]),sd([...cv.t2Ratio])), hq=ratioShape(mean([...cv.qRatio]),sd([...cv.qRatio]));
 const nw=Array.from({length:2000},row); const s=scoreBatch(m,nw);
 const tr=[...s.t2].map(x=>x/m.limits.t2), qr=[...s.q].map(x=>x/m.limits.q);
 const st=ratioScale(ht,m.alpha), sq=ratioScale(hq,m.alpha);
 const zt=tr.map(st.score), zq=qr.map(sq.score);
 agg.t2.push(tr.filter(x=>x>1).length/tr.length); agg.q.push(qr.filter(x=>x>1).length/qr.length);
 agg.zt.push([mean(zt),sd(zt)]); agg.zq.push([mean(zq),sd(zq)]); agg.h.push([ht,hq]); agg.acf.push([zt.filter(z=>z>3).length/zt.length, zq.filter(z=>z>3).length/zq.length, zt.filter(z=>z>4).length/zt.length, zq.filter(z=>z>4).length/zq.length]);
 }
 const mean=a=>a.reduce((s,x)=>s+x,0)/a.length;
 console.log(`p=${p} lot=${lotsd}: P(t2>1)=${mean(agg.t2).toFixed(4)} P(q>1)=${mean(agg.q).toFixed(4)} zT2 mean ${mean(agg.zt.map(x=>x[0])).toFixed(3)} sd ${mean(agg.zt.map(x=>x[1])).toFixed(3)} zQ mean ${mean(agg.zq.map(x=>x[0])).toFixed(3)} sd ${mean(agg.zq.map(x=>x[1])).toFixed(3)} h ${mean(agg.h.map(x=>x[0])).toFixed(1)} ${mean(agg.h.map(x=>x[1])).toFixed(1)} P(z>3) t2 ${mean(agg.acf.map(x=>x[0])).toFixed(5)} q ${mean(agg.acf.map(x=>x[1])).toFixed(5)} P(z>4) ${mean(agg.acf.map(x=>x[2])).toFixed(5)} ${mean(agg.acf.map(x=>x[3])).toFixed(5)}`);
}
