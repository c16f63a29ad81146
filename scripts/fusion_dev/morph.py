import os, sys
# Morphology check on top of the vote fusion: a beat outside clean windows is kept only when it
# resembles (correlation) one of the recent accepted beats on at least one lead.
sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from sel import *
from gate import run, mit
DEV=['100','103','105','106','113','200','201','208','213','221']
_S={}
def sigs(j):
    nm=j['name']
    if nm not in _S: _S.clear(); _S[nm]=[sig(nm,k) for k in range(len(j['leads']))]
    return _S[nm]
def base(j,thr=0.9,margin=0.2,k=3,short=0.8,merge=1.3):
    # the current vote fusion: (sample, clean-window, protected) per beat
    fs=j['fs']; q0,q1,qx,L=wins(j); v=votes(j)
    clean=q0>=thr; use1=(~clean)&(q1>=q0+margin)
    out=[]
    for p,src in v:
        w=p//L
        if clean[w]:
            if 0 in src: out.append((p,True,len(src)>=3,len(src)))
        elif use1[w]:
            if 2 in src and len(src)>=2:
                out.append((p,False,False,len(src)))
        elif len(src)>=k: out.append((p,False,False,len(src)))
    out.sort()
    b=np.array([o[0] for o in out]); prot=np.array([o[2] for o in out]); cl=np.array([o[1] for o in out])
    keep=np.ones(len(b),bool)
    if short>0 and len(b)>4:
        rr=np.diff(b)
        for i in range(1,len(b)-1):
            if prot[i]: continue
            med=np.median(rr[max(0,i-8):min(len(rr),i+8)])
            if b[i]-b[i-1]<short*med and b[i+1]-b[i]<short*med and b[i+1]-b[i-1]<merge*med: keep[i]=False
    return b[keep],cl[keep]
def seg(x,p,h,lag):
    lo=p-h+lag; hi=p+h+1+lag
    if lo<0 or hi>len(x): return None
    s=x[lo:hi].copy(); t=np.arange(len(s)); s-=np.polyval(np.polyfit(t,s,1),t)
    nrm=np.linalg.norm(s); return s/nrm if nrm>0 else None
def corr_bank(x,p,bank,h,maxlag):
    best=-1.0
    if not bank: return 1.0
    B=np.array(bank)
    for lag in range(-maxlag,maxlag+1):
        s=seg(x,p,h,lag)
        if s is None: continue
        best=max(best,float((B@s).max()))
    return best
def M(j,T=0.6,half_s=0.08,lag_s=0.02,M_=16,mode='max',bank_from='accepted',**kw):
    b,cl=base(j,**kw)
    fs=j['fs']; X=sigs(j); h=int(half_s*fs); ml=int(lag_s*fs)
    banks=[[] for _ in X]; keep=np.ones(len(b),bool)
    for i,p in enumerate(b):
        if cl[i]:
            ok=True
        else:
            rs=[corr_bank(x,p,bk,h,ml) for x,bk in zip(X,banks)]
            r=max(rs) if mode=='max' else np.mean(rs)
            ok=r>=T
        keep[i]=ok
        if ok and (cl[i] or bank_from=='accepted'):
            for x,bk in zip(X,banks):
                s=seg(x,p,h,0)
                if s is not None:
                    bk.append(s)
                    if len(bk)>M_: bk.pop(0)
    return b[keep]
def show(f,label,nst=False):
    out=[label]
    for grp,names in [('synth',[f'd{r}s{s}' for r in DEV for s in ('12','06')]),('ma',[f'm{r}s{s}' for r in DEV for s in ('12','06')])]:
        t=run(names,f)[0]; out.append(f'{grp} FP {t[1]} FN {t[2]} err {t[1]+t[2]}')
    for s in ('06',):
        t=run([f'd{r}s{s}' for r in DEV]+[f'm{r}s{s}' for r in DEV],f); out.append(f'dev6 Se {t[1]} +P {t[2]}')
    m=run([x for x in mit if x not in ('118','119')],f); out.append(f'mit- {m[1:]} {m[0]}')
    print(' | '.join(map(str,out)),flush=True)
if __name__=='__main__':
    show(lambda j:base(j)[0],'current vote fusion')
    for T in [float(a) for a in sys.argv[1:]] or [0.5,0.6,0.7]:
        show(lambda j:M(j,T),f'morph T{T}')
