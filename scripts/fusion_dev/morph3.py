import os, sys
# Search-back variants on top of morph2 (same morphology check, same template bank):
# - `rec`: after a candidate fills a long RR interval, the two halves are searched again
#   (recursively, as long as a half is still longer than `fill` times the local median);
# - `w`: lead weighting of the similarity: 'mean' (morph2), 'q' (weights = each lead's bSQI
#   between its two detectors in the candidate's 10 s window, after Li, Mark & Clifford 2008);
# - `mfT`: matched filter on the template bank when no list candidate qualifies: every sample
#   within ±`mfw` median RR of the expected beat (previous beat + local median RR) is scored by
#   its similarity, and the best is added when it reaches `mfT` (0 = off).
sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from morph import *
from opt import wins
from morph2 import morph_keep
def classes(segs,K,same=0.9,need=2):
    # per lead: distinct shapes among the clean beats, in time order; a shape becomes a template
    # once `need` clean beats have it (correlation >= `same` with its first beat); at most K.
    out=[]
    for S in segs:
        cls=[]  # [template, count, valid_from (clean-beat index after which it is usable)]
        for k,s in enumerate(S):
            if s is None: continue
            r=[float(c[0]@s) for c in cls]
            if r and max(r)>=same:
                c=cls[int(np.argmax(r))]; c[1]+=1
                if c[1]==need: c[2]=k+1
            elif len(cls)<K: cls.append([s,1,10**12 if need>1 else k+1])
        out.append(cls)
    return out
def sim_fn3(j,b,cl,w="mean",half_s=0.08,lag_s=0.02,nbank=16,K=0,need=2):
    fs=j['fs']; X=sigs(j); h=int(half_s*fs); ml=int(lag_s*fs)
    cb=b[cl]; segs=[[seg(x,p,h,0) for p in cb] for x in X]
    q0,q1,qx,L=wins(j); Q=[q0,q1]; C=classes(segs,K,need=need) if K>0 else [[] for _ in X]
    def sim(p):
        k=np.searchsorted(cb,p); rs=[]; ws=[]
        for li,x in enumerate(X):
            bank=[s for s in segs[li][max(0,k-nbank):k] if s is not None]+[c[0] for c in C[li] if c[2]<=k]
            rs.append(corr_bank(x,p,bank,h,ml) if bank else 1.0)
            ws.append(max(0.05,Q[li][min(p//L,len(Q[li])-1)]) if w=='q' else 1.0)
        return float(np.dot(rs,ws)/sum(ws))
    return sim
def M3(j,T=0.8,Q=0.9,fill=1.5,fillk=2,fillT=0.8,rec=1,w="mean",mfT=0.0,mfw=0.15,K=0,need=2):
    b,cl=base(j); sim=sim_fn3(j,b,cl,w,K=K,need=need)
    b2=morph_keep(b,cl,sim,T,Q)
    return search_back(j,b2,sim,fill,fillk,fillT,rec,mfT,mfw)
def search_back(j,b2,sim,fill,fillk,fillT,rec,mfT,mfw):
    """The repeated search-back on the beats b2 (shared by morph3.py and morph4.py)."""
    if fill<=0 or len(b2)<5: return b2
    v=votes(j); cand=np.array([p for p,src in v if len(src)>=fillk]); rr=np.diff(b2); add=[]
    def fillgap(a,z,med,depth):
        if z-a<=fill*med or depth>=rec: return
        m=(cand>a+0.3*med)&(cand<z-0.3*med); best=None
        for c in cand[m]:
            s=sim(c)
            if s>=fillT and (best is None or s>best[0]): best=(s,c)
        if best is None and mfT>0:
            e=int(a+med); lo=max(int(a+0.3*med),int(e-mfw*med)); hi=min(int(z-0.3*med),int(e+mfw*med))
            step=max(1,int(0.008*j['fs']))
            for c in range(lo,hi+1,step):
                s=sim(c)
                if s>=mfT and (best is None or s>best[0]): best=(s,c)
        if best:
            add.append(best[1]); fillgap(a,best[1],med,depth+1); fillgap(best[1],z,med,depth+1)
    for i in range(len(b2)-1):
        med=np.median(rr[max(0,i-8):min(len(rr),i+8)])
        fillgap(b2[i],b2[i+1],med,0)
    return np.array(sorted(list(b2)+add))
if __name__=='__main__':
    for spec in sys.argv[1:]:
        a=spec.split(',')
        T,Q,fill,fillk,fillT=map(float,a[:5]); rec=int(a[5]); w=a[6]; mfT=float(a[7]); K=int(a[8]) if len(a)>8 else 0; need=int(a[9]) if len(a)>9 else 2
        show(lambda j:M3(j,T,Q,fill,int(fillk),fillT,rec,w,mfT,K=K,need=need),f'morph3 {spec}')
