import os, sys
sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from lib import *; from vote import votes
PACED={'102','104','107','217'}
def bsqi_windows(a,b,fs,n,win_s=10.0):
    L=int(win_s*fs); nw=(n+L-1)//L; q=np.ones(nw)
    ma,mb=match(a,b,int(0.15*fs))
    for k in range(nw):
        ia=(a>=k*L)&(a<(k+1)*L); ib=(b>=k*L)&(b<(k+1)*L)
        m=(ma&ia).sum(); na=ia.sum(); nb=ib.sum()
        den=na+nb-m
        q[k]=m/den if den>0 else 1.0
    return q,L
def fused(j,k=3,thr=0.9,rr=False):
    fs=j['fs']; n=j['n']; l0=j['leads'][0]
    if len(j['leads'])<2: return l0['el']
    q,L=bsqi_windows(l0['el'],l0['pt'],fs,n)
    v=votes(j); out=[]
    el0=l0['el']
    for s in el0:
        if q[s//L]>=thr: out.append(s)
    for p,src in v:
        if q[p//L]<thr and len(src)>=k: out.append(p)
    return np.array(sorted(out))
def run(names,f):
    t=[0,0,0]
    for nm in names:
        j=load(nm); s=score(j,f(j)); t=[a+b for a,b in zip(t,s)]
    return t, round(100*t[0]/(t[0]+t[2]),2), round(100*t[0]/(t[0]+t[1]),2)
mit=sorted(os.path.basename(p)[:-5] for p in glob.glob(D+'/[12]??.json'))
mit=[m for m in mit if m not in PACED]
if __name__=='__main__':
    print('mit base', run(mit,lambda j:j['leads'][0]['el']))
    for thr in [0.0,0.8,0.9,1.01]:
        print(thr,'mit',run(mit,lambda j:fused(j,3,thr)))
        for snr in ['12','06']:
            print(thr,snr,run([f'118e{snr}',f'119e{snr}'],lambda j:fused(j,3,thr)))
