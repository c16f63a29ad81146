import os, sys
# Beat-like motion-artefact noise, made here (seeded), on the ten development records (not 118,
# 119): what the first synthetic noise (`mknoise.py`) under-represents is artefacts shaped and
# spaced like beats. Per record:
# - motion events: isolated ones at a Poisson rate of 0.4/s, and bursts (Poisson rate 0.15/s,
#   lasting 1 to 4 s) of events spaced like a rhythm, every 0.35 to 1.0 s (one spacing per burst)
#   with 10 % jitter;
# - each event: a QRS-like complex (three Gaussian lobes q, R, s of 8 to 25 ms, R of random sign,
#   heavy-tailed size) on top of a baseline step that relaxes exponentially (0.15 to 0.8 s), the
#   half-cell potential change of an electrode that moves;
# - leads: an event reaches lead 0 and lead 1 with gains drawn with correlation 0.5 (70 % of the
#   events) or one lead only (30 %);
# - plus band-limited 0.5-10 Hz noise at a third of the power;
# - 120 s noisy then 120 s clean from 300 s, SNR 12 and 6 dB against the median QRS peak-to-peak
#   amplitude of each lead (signal power pp^2/8), as `mknoise.py`.
import json; sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from lib import *
from scipy_free import bandpass
DEV=['100','103','105','106','113','200','201','208','213','221']
def events(n,fs,rng):
    T=n/fs; ev=list(rng.uniform(0,T,rng.poisson(0.4*T)))
    for b0 in rng.uniform(0,T,rng.poisson(0.15*T)):
        dur=rng.uniform(1,4); step=rng.uniform(0.35,1.0); t=b0
        while t<b0+dur:
            ev.append(t); t+=step*(1+0.1*rng.standard_normal())
    return np.sort(np.array(ev))
def shape(n,fs,rng,t0):
    # one event: QRS-like complex + relaxing baseline step (unit-less), as (first sample, values)
    p=min(max(int(t0*fs),0),n-1)
    w=rng.uniform(0.008,0.025); a=rng.standard_t(3)*(1 if rng.random()<0.5 else -1)
    tau=rng.uniform(0.15,0.8); st=0.5*rng.standard_normal()
    h=int(0.25*fs); lo=max(0,p-h); hi=min(n,p+max(h,int(5*tau*fs))); tt=(np.arange(lo,hi)-p)/fs
    c=a*(np.exp(-0.5*(tt/w)**2)-0.3*np.exp(-0.5*((tt+1.8*w)/w)**2)-0.4*np.exp(-0.5*((tt-1.8*w)/w)**2))
    c+=np.where(tt>=0,st*np.exp(-np.maximum(tt,0)/tau),0.0)
    return lo,c
def beat_noise(n,fs,rng):
    art=[np.zeros(n),np.zeros(n)]
    for t0 in events(n,fs,rng):
        lo,s=shape(n,fs,rng,t0)
        if rng.random()<0.7:
            g=rng.multivariate_normal([0,0],[[1,0.5],[0.5,1]])
        else:
            g=np.zeros(2); g[rng.integers(0,2)]=rng.standard_normal()
        for k in range(2): art[k][lo:lo+len(s)]+=g[k]*s
    out=[]
    for k in range(2):
        a=art[k]/(art[k].std() or 1.0)
        b=bandpass(rng.standard_normal(n),fs,0.5,10.0); b/=b.std()
        x=a+np.sqrt(0.5)*b; out.append(x/x.std())
    return out
def main(seed=13):
    rng=np.random.default_rng(seed)
    for r in DEV:
        j=load(r); fs=j['fs']; n=j['n']; mask=noisy_mask(fs,n)
        nz=beat_noise(n,fs,rng)
        for k in range(2):
            x=sig(r,k); h=int(0.05*fs)
            pp=np.median([x[p-h:p+h].max()-x[p-h:p+h].min() for p in j['ref'] if p>h and p+h<n])
            for snr in [12,6]:
                rms=pp/np.sqrt(8)/10**(snr/20)
                y=x+mask*rms*nz[k]
                y.astype(np.float32).tofile(f'{D}/b{r}s{snr:02d}_{k}.f32')
        for snr in [12,6]:
            jj=dict(name=f'b{r}s{snr:02d}',fs=fs,n=n,ref=j['ref'].tolist(),codes=j['codes'],leads=[])
            json.dump(jj,open(f'{D}/b{r}s{snr:02d}.meta.json','w'))
if __name__=="__main__": main()
