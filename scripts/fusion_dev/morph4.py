import os, sys
# morph3.py plus one step and a third development noise:
# - `cs` (split check in clean windows): a clean-window beat that splits its RR interval into two
#   parts both below `rr_short_ratio` (0.8) of the local median, while the interval without it
#   stays below `rr_merge_ratio` (1.3) of the median (the RR-context test of base()), is dropped
#   when its similarity to the earlier clean beats is below T. base() already drops such beats
#   without a majority of the lists; this also reaches those with a majority, which detectors on
#   both leads find when an artefact is shaped like a beat on both leads.
# - the development records with the beat-like motion noise of mknoise_beat.py (`b*`), besides
#   the synthetic (`d*`, mknoise.py) and recorded ma + bw (`m*`, mknoise_real.py) ones.
# One argument per setting: T,Q,gap,lists,similarity,rec,w,mfT,K,need,cs (cs 0 = off, 1 = on).
# Prints per noise FP and FN (synthetic, recorded, beat-like), dev 6 dB Se/+P over the three
# noises and MIT-BIH pooled Se/+P without 118 and 119. Nothing about 118e*/119e*.
sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from morph import *
from morph2 import morph_keep
from morph3 import search_back, sim_fn3
def split_keep(b,cl,sim,T,short=0.8,merge=1.3):
    rr=np.diff(b); keep=np.ones(len(b),bool)
    for i,p in enumerate(b):
        if not cl[i] or i==0 or i+1==len(b): continue
        med=np.median(rr[max(0,i-8):min(len(rr),i+8)])
        if rr[i-1]<short*med and rr[i]<short*med and b[i+1]-b[i-1]<merge*med and sim(p)<T: keep[i]=False
    return keep
def M4(j,T=0.8,Q=0.9,fill=1.5,fillk=2,fillT=0.8,rec=1,w="mean",mfT=0.0,mfw=0.15,K=0,need=2,cs=0):
    b,cl=base(j); sim=sim_fn3(j,b,cl,w,K=K,need=need)
    if cs and len(b)>4:
        k=split_keep(b,cl,sim,T); b=b[k]; cl=cl[k]
    b2=morph_keep(b,cl,sim,T,Q)
    return search_back(j,b2,sim,fill,fillk,fillT,rec,mfT,mfw)
def show4(f,label):
    out=[label]
    for grp in 'dmb':
        t=run([f'{grp}{r}s{s}' for r in DEV for s in ('12','06')],f)[0]
        out.append(f'{grp} FP {t[1]} FN {t[2]}')
    t=run([f'{g}{r}s06' for g in 'dmb' for r in DEV],f); out.append(f'dev6 Se {t[1]} +P {t[2]}')
    m=run([x for x in mit if x not in ('118','119')],f); out.append(f'mit- {m[1]} {m[2]}')
    print(' | '.join(map(str,out)),flush=True)
if __name__=='__main__':
    for spec in sys.argv[1:]:
        a=spec.split(',')
        T,Q,fill,fillk,fillT=map(float,a[:5]); rec=int(a[5]); w=a[6]; mfT=float(a[7]); K=int(a[8]); need=int(a[9]); cs=int(a[10])
        show4(lambda j:M4(j,T,Q,fill,int(fillk),fillT,rec,w,mfT,K=K,need=need,cs=cs),f'morph4 {spec}')
