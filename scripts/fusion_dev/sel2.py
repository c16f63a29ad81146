import os, sys
sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from sel import *
def err(names,f):
    t=run(names,f)[0]; return t[1]+t[2]
def show2(f,label):
    e=err([f'd{r}s12' for r in DEV]+[f'd{r}s06' for r in DEV],f)
    m=run([x for x in mit if x not in ('118','119')],f)
    n12=run(['118e12','119e12'],f); n6=run(['118e06','119e06'],f)
    print(label,'| dev errors',e,'| mit-',m[1:],'| nst12',n12[1:],'nst6',n6[1:],flush=True)
if __name__=="__main__": show2(lambda j:j["leads"][0]["el"],"base")
if __name__=='__main__':
  for thr in [0.7,0.8,0.9]:
   for margin in [0.0,0.2]:
        for short in [0.0,0.7]:
            for swapk in [1,2]:
                show2(lambda j:R(j,thr,margin,3,short,False,swapk),f'thr{thr} m{margin} s{short} swapk{swapk}')
