import os, sys
# synthetic electrode-motion-like noise on MIT-BIH records (dev set; not nstdb)
import json; sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from lib import *
from scipy_free import bandpass
DEV=['100','103','105','106','113','200','201','208','213','221']
def em_noise(n,fs,rng):
    w=rng.standard_normal(n); base=bandpass(w,fs,0.5,20.0)
    # 1/f tilt: add a low band
    base=base+2.0*bandpass(rng.standard_normal(n),fs,0.5,3.0)
    base/=base.std()
    # transients: QRS-like biphasic pulses at Poisson rate 1.5/s
    t=np.arange(n)/fs; tr=np.zeros(n)
    k=rng.poisson(1.5*n/fs); pos=rng.integers(0,n,k); wid=rng.uniform(0.015,0.06,k); amp=rng.standard_t(3,k)
    for p,s,a in zip(pos,wid,amp):
        h=int(4*s*fs); lo=max(0,p-h); hi=min(n,p+h); tt=(np.arange(lo,hi)-p)/fs
        tr[lo:hi]+=a*(-tt/s)*np.exp(-0.5*(tt/s)**2)
    tr/=tr.std()
    return base+tr
def main(seed=7):
    rng=np.random.default_rng(seed)
    for r in DEV:
        j=load(r); fs=j['fs']; n=j['n']
        mask=noisy_mask(fs,n)
        shared=em_noise(n,fs,rng)
        for snr in [12,6]:
            pass
        for k in range(2):
            x=sig(r,k); h=int(0.05*fs)
            pp=np.median([x[p-h:p+h].max()-x[p-h:p+h].min() for p in j['ref'] if p>h and p+h<n])
            own=em_noise(n,fs,rng); nz=(0.6*own+0.4*shared); nz/=nz.std()
            for snr in [12,6]:
                rms=pp/np.sqrt(8)/10**(snr/20)
                y=x+mask*rms*nz
                y.astype(np.float32).tofile(f'{D}/d{r}s{snr:02d}_{k}.f32')
        for snr in [12,6]:
            jj=dict(name=f'd{r}s{snr:02d}',fs=fs,n=n,ref=j['ref'].tolist(),codes=j['codes'],leads=[])
            json.dump(jj,open(f'{D}/d{r}s{snr:02d}.meta.json','w'))
if __name__=="__main__": main()
