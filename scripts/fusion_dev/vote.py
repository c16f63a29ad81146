import os, sys
sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from lib import *
def votes(j, tol_s=0.1):
    fs=j['fs']; tol=int(tol_s*fs)
    lists=[j['leads'][0]['el'],j['leads'][0]['pt']]+([j['leads'][1]['el'],j['leads'][1]['pt']] if len(j['leads'])>1 else [])
    allb=np.concatenate([np.c_[l,np.full(len(l),i)] for i,l in enumerate(lists)])
    allb=allb[np.argsort(allb[:,0],kind='stable')]
    clusters=[]; cur=[]
    for s,i in allb:
        if cur and s-cur[0][0]>tol:
            clusters.append(cur); cur=[]
        cur.append((s,i))
    if cur: clusters.append(cur)
    out=[]
    for c in clusters:
        src=set(i for _,i in c)
        pos=[s for s,i in c if i==0] or [s for s,i in c if i==2] or [s for s,i in c]
        out.append((pos[0],src))
    return out
def rule(j,k):
    return [p for p,src in votes(j) if len(src)>=k]
if __name__=='__main__':
    for k in [1,2,3]:
        for snr in ['24','18','12','06','00']:
            t=[0,0,0]
            for r in ['118','119']:
                j=load(f'{r}e{snr}'); s=score(j,rule(j,k))
                t=[a+b for a,b in zip(t,s)]
            print(k,snr,t, round(100*t[0]/(t[0]+t[2]),2), round(100*t[0]/(t[0]+t[1]),2))
