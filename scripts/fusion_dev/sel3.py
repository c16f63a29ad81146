import os, sys
sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from sel import *; from sel2 import show2
def R2(j,thr=0.9,margin=0.2,k=3,short=0.7,clean_rr='none',merge=1.3):
    fs=j['fs']; q0,q1,qx,L=wins(j); v=votes(j)
    clean=q0>=thr; use1=(~clean)&(q1>=q0+margin)
    pos=[];prot=[]
    for p,src in v:
        w=p//L
        if clean[w]:
            if 0 in src:
                pos.append(p)
                lead1=(2 in src) or (3 in src)
                prot.append(True if clean_rr=='none' else (lead1 if clean_rr=='lead1' else len(src)>=3))
        elif use1[w]:
            if 2 in src and len(src)>=2: pos.append(p); prot.append(False)
        elif len(src)>=k: pos.append(p); prot.append(False)
    b=np.array(pos); prot=np.array(prot)
    if short>0 and len(b)>4:
        rr=np.diff(b); rej=np.zeros(len(b),bool)
        for i in range(1,len(b)-1):
            if prot[i]: continue
            med=np.median(rr[max(0,i-8):min(len(rr),i+8)])
            if b[i]-b[i-1]<short*med and b[i+1]-b[i]<short*med and b[i+1]-b[i-1]<merge*med: rej[i]=True
        b=b[~rej]
    return b
if __name__=='__main__':
    for cr in ['none','lead1','votes3']:
        for sh in [0.7,0.8]:
            show2(lambda j:R2(j,clean_rr=cr,short=sh),f'{cr} short{sh}')
