import os, sys
sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from sel import *
# Symmetric lead choice: outside clean windows, a lead clearly better than the other (bSQI margin)
# gives its primary beats confirmed by a second list; comparable leads vote (3 of 4).
def R5(j,thr=0.9,margin=0.2,k=3,short=0.8,margin0=None):
    margin0=margin if margin0 is None else margin0
    fs=j['fs']; q0,q1,qx,L=wins(j); v=votes(j)
    clean=q0>=thr; use1=(~clean)&(q1>=q0+margin); use0=(~clean)&(q0>=q1+margin0)
    pos=[];prot=[]
    for p,src in v:
        w=p//L
        if clean[w]:
            if 0 in src: pos.append(p); prot.append(len(src)>=3)
        elif use1[w]:
            if 2 in src and len(src)>=2: pos.append(p); prot.append(False)
        elif use0[w]:
            if 0 in src and len(src)>=2: pos.append(p); prot.append(False)
        elif len(src)>=k: pos.append(p); prot.append(False)
    b=np.array(pos); prot=np.array(prot)
    if short>0 and len(b)>4:
        rr=np.diff(b); rej=np.zeros(len(b),bool)
        for i in range(1,len(b)-1):
            if prot[i]: continue
            med=np.median(rr[max(0,i-8):min(len(rr),i+8)])
            if b[i]-b[i-1]<short*med and b[i+1]-b[i]<short*med and b[i+1]-b[i-1]<1.3*med: rej[i]=True
        b=b[~rej]
    return b
if __name__=='__main__':
    from sel2 import show2
    for m0 in [0.2,0.3,0.4]:
        f=lambda j:R5(j,margin0=m0)
        show2(f,f'symmetric margin0 {m0}')
        print('  excerpts',[ (nm,score(load(nm),f(load(nm)),0)) for nm in ['105d','108d','203d'] if os.path.exists(f'{D}/{nm}.json')],flush=True)
