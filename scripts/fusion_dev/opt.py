import os, sys
sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from lib import *; from vote import votes; from gate import bsqi_windows, run, mit
def wins(j):
    fs=j['fs']; n=j['n']; l0=j['leads'][0]; l1=j['leads'][1]
    q0,L=bsqi_windows(l0['el'],l0['pt'],fs,n); q1,_=bsqi_windows(l1['el'],l1['pt'],fs,n); qx,_=bsqi_windows(l0['el'],l1['el'],fs,n)
    return q0,q1,qx,L
def F(j,margin=0.2):
    l0=j['leads'][0]; l1=j['leads'][1]; q0,q1,qx,L=wins(j)
    use1=q1>q0+margin
    a=[s for s in l0['el'] if not use1[s//L]]; b=[s for s in l1['el'] if use1[s//L]]
    return np.array(sorted(a+b))
def G(j,thr=0.9,k=3,xthr=0.9):
    l0=j['leads'][0]; q0,q1,qx,L=wins(j); v=votes(j)
    clean=(q0>=thr)&(qx>=xthr)
    out=[s for s in l0['el'] if clean[s//L]]+[p for p,src in v if not clean[p//L] and len(src)>=k]
    return np.array(sorted(out))
def H(j,thr=0.9,k=3,margin=0.1):
    l0=j['leads'][0]; l1=j['leads'][1]; q0,q1,qx,L=wins(j); v=votes(j)
    clean=(q0>=thr)
    use1=(~clean)&(q1>=q0+margin)
    out=[s for s in l0['el'] if clean[s//L]]+[p for p,src in v if not clean[p//L] and not use1[p//L] and len(src)>=k]
    out+= [p for p,src in v if use1[p//L] and 2 in src and len(src)>=2]
    return np.array(sorted(out))
if __name__=='__main__':
    for name,f in [('F.2',F),('F0',lambda j:F(j,0.0)),('G.9/.9',G),('G.9/.8',lambda j:G(j,0.9,3,0.8)),('G.8/.9',lambda j:G(j,0.8,3,0.9)),('H.1',H),('H0',lambda j:H(j,0.9,3,0.0)),('H.95',lambda j:H(j,0.95,3,0.0))]:
        print(name,'12',run(['118e12','119e12'],f),'06',run(['118e06','119e06'],f),'mit',run(mit,f))
