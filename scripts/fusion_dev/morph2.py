import os, sys
# Morphology and RR check on top of the vote fusion, plus a morphology-guided search-back:
# - template bank: per lead, the last `nbank` beats of clean windows before the candidate;
# - similarity: the mean over the leads of the best correlation with the bank (lag ±20 ms);
# - a beat outside clean windows is dropped when its similarity is below T and one of its RR
#   intervals is below Q times the local median RR;
# - search-back: in an RR gap longer than `fill` times the median, the cluster of at least
#   `fillk` lists with the highest similarity ≥ `fillT`, at least 0.3 median RR from both ends.
sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from morph import *
def sim_fn(j,b,cl,half_s=0.08,lag_s=0.02,nbank=16):
    fs=j['fs']; X=sigs(j); h=int(half_s*fs); ml=int(lag_s*fs)
    cb=b[cl]
    segs=[[seg(x,p,h,0) for p in cb] for x in X]
    def sim(p):
        k=np.searchsorted(cb,p)
        rs=[]
        for li,x in enumerate(X):
            bank=[s for s in segs[li][max(0,k-nbank):k] if s is not None]
            rs.append(corr_bank(x,p,bank,h,ml) if bank else 1.0)
        return float(np.mean(rs))
    return sim
def morph_keep(b,cl,sim,T,Q):
    # the morphology check: drop a beat outside clean windows when one of its RR intervals is
    # below Q times the local median RR and its similarity is below T (T <= 0: keep every beat)
    rr=np.diff(b); keep=np.ones(len(b),bool)
    for i,p in enumerate(b):
        if cl[i] or i==0 or i+1==len(b) or T<=0: continue
        med=np.median(rr[max(0,i-8):min(len(rr),i+8)])
        if min(p-b[i-1],b[i+1]-p)<Q*med and sim(p)<T: keep[i]=False
    return b[keep]
def M2(j,T=0.5,Q=0.8,fill=0.0,fillk=2,fillT=0.8,**kw):
    b,cl=base(j,**kw); sim=sim_fn(j,b,cl)
    b2=morph_keep(b,cl,sim,T,Q)
    if fill<=0 or len(b2)<5: return b2
    v=votes(j); cand=np.array([p for p,src in v if len(src)>=fillk]); rr=np.diff(b2); add=[]
    for i in range(len(b2)-1):
        med=np.median(rr[max(0,i-8):min(len(rr),i+8)])
        if rr[i]>fill*med:
            m=(cand>b2[i]+0.3*med)&(cand<b2[i+1]-0.3*med)
            best=None
            for c in cand[m]:
                s=sim(c)
                if s>=fillT and (best is None or s>best[0]): best=(s,c)
            if best: add.append(best[1])
    return np.array(sorted(list(b2)+add))
if __name__=='__main__':
    a=sys.argv[1:]
    for spec in a:
        T,Q,fill,fillk,fillT=map(float,spec.split(','))
        show(lambda j:M2(j,T,Q,fill,int(fillk),fillT),f'morph2 T{T} Q{Q} fill{fill} k{int(fillk)} fT{fillT}')
