import os, sys
sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from lib import *; from vote import votes; from gate import bsqi_windows, run, mit; from opt import wins
DEV=['100','103','105','106','113','200','201','208','213','221']
def R(j,thr=0.9,margin=0.0,k=3,short=0.0,fill=False,swapk=2):
    fs=j['fs']; l0=j['leads'][0]; l1=j['leads'][1]; q0,q1,qx,L=wins(j); v=votes(j)
    clean=q0>=thr; use1=(~clean)&(q1>=q0+margin)
    pos=[];strong=[];cl=[]
    for p,src in v:
        w=p//L
        if clean[w]:
            if 0 in src: pos.append(p); strong.append(True); cl.append(True)
        elif use1[w]:
            if 2 in src and len(src)>=swapk: pos.append(p); strong.append(True); cl.append(False)
        elif len(src)>=k: pos.append(p); strong.append(True); cl.append(False)
    b=np.array(pos); cl=np.array(cl)
    if short>0 and len(b)>4:
        rr=np.diff(b); rej=np.zeros(len(b),bool)
        for i in range(1,len(b)-1):
            if cl[i]: continue
            med=np.median(rr[max(0,i-8):min(len(rr),i+8)])
            if b[i]-b[i-1]<short*med and b[i+1]-b[i]<short*med and b[i+1]-b[i-1]<1.3*med: rej[i]=True
        b=b[~rej]
    return b
def show(f,label):
    dev12=run([f'd{r}s12' for r in DEV],f); dev6=run([f'd{r}s06' for r in DEV],f)
    m=run([x for x in mit if x not in ('118','119')],f)
    n12=run(['118e12','119e12'],f); n6=run(['118e06','119e06'],f)
    print(label,'| dev12',dev12[1:],dev12[0][1],'dev6',dev6[1:],dev6[0][1],'| mit-',m[1:],'| nst12',n12[1:],'nst6',n6[1:])
if __name__=='__main__':
    show(lambda j:j['leads'][0]['el'],'base')
    for thr in [0.8,0.9,0.95]:
        for margin in [0.0,0.2]:
            for short in [0.0,0.7]:
                show(lambda j:R(j,thr,margin,3,short),f'thr{thr} m{margin} s{short}')
