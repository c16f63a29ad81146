import os, sys
sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from sel import *
from sel3 import R2
import sel2
def R3(j,short=0.8,fill=1.5,fillk=2,clean_rr='votes3'):
    b=R2(j,clean_rr=clean_rr,short=short)
    if fill<=0: return b
    v=votes(j); cand=np.array([p for p,src in v if len(src)>=fillk]); sup=np.array([len(src) for p,src in v if len(src)>=fillk])
    rr=np.diff(b); add=[]
    for i in range(len(b)-1):
        med=np.median(rr[max(0,i-8):min(len(rr),i+8)])
        if rr[i]>fill*med:
            m=(cand>b[i]+0.5*med)&(cand<b[i+1]-0.5*med)
            if m.any():
                ii=np.where(m)[0]; add.append(cand[ii[np.argmax(sup[ii])]])
    return np.array(sorted(list(b)+add))
if __name__=='__main__':
    from sel2 import show2
    for sh in [0.7,0.8]:
        for fill in [0,1.5,1.7]:
            show2(lambda j:R3(j,sh,fill),f'votes3 short{sh} fill{fill}')
