#!/usr/bin/env python3
# Expected values of src/uncertainty/intervals.rs tests (simulated rank intervals, SplitMix64,
# Box-Muller), computed apart from the Rust code. Run: python3 simulated_intervals.py
# Independent transcription (Python) of the published pieces: SplitMix64 (Vigna's splitmix64.c),
# uniform from the top 53 bits, Box-Muller, standard competition ranks, nearest-rank percentiles.
import math
M=(1<<64)-1
class SM:
    def __init__(s,seed): s.x=seed
    def next(s):
        s.x=(s.x+0x9E3779B97F4A7C15)&M; z=s.x
        z=((z^(z>>30))*0xBF58476D1CE4E5B9)&M; z=((z^(z>>27))*0x94D049BB133111EB)&M
        return z^(z>>31)
    def u(s): return ((s.next()>>11)+0.5)/2**53
    def n(s):
        u1=s.u(); u2=s.u(); return math.sqrt(-2*math.log(u1))*math.cos(2*math.pi*u2)
def sim(values,ses,draws,seed,conf,desc):
    g=SM(seed); k=len(values); ranks=[[] for _ in range(k)]
    for _ in range(draws):
        d=[values[j]+ses[j]*g.n() for j in range(k)]
        for i in range(k):
            ranks[i].append(1+sum(1 for j in range(k) if (d[j]>d[i] if desc else d[j]<d[i])))
    lo_q=(1-conf)/2; hi_q=1-lo_q; out=[]
    for r in ranks:
        r.sort(); n=len(r)
        pick=lambda q: r[min(max(math.ceil(q*n),1),n)-1]
        out.append((pick(lo_q),pick(hi_q)))
    return out
for conf in (0.9, 0.5):
  for desc in (True, False):
    print(conf, desc, sim([10,10.8,11.5,14],[1,0.6,1,0.3],200,7,conf,desc))
