import os, sys
# Recorded noise of the noise stress test database (nstdb `ma` muscle artefact, both of its
# channels, plus `bw` baseline wander at a quarter of the power) added to MIT-BIH records other
# than 118 and 119, from a seeded offset, in the 120 s on / 120 s off pattern of the noise stress
# test from 300 s (Moody, Muldrow & Mark 1984); SNR against the median QRS peak-to-peak
# amplitude of each lead, signal power pp^2/8 (from memory).
import json; sys.path.insert(0,os.path.dirname(os.path.abspath(__file__))); from lib import *
DEV=['100','103','105','106','113','200','201','208','213','221']
def main(seed=11):
    rng=np.random.default_rng(seed)
    ma=[sig('ma',k) for k in range(2)]; bw=[sig('bw',k) for k in range(2)]
    for r in DEV:
        j=load(r); fs=j['fs']; n=j['n']; mask=noisy_mask(fs,n)
        off=int(rng.integers(0,len(ma[0])-n)) if len(ma[0])>n else 0
        for k in range(2):
            x=sig(r,k); h=int(0.05*fs)
            pp=np.median([x[p-h:p+h].max()-x[p-h:p+h].min() for p in j['ref'] if p>h and p+h<n])
            a=ma[k][off:off+n]; a=a-a.mean(); a/=a.std()
            b=bw[k][off:off+n]; b=b-b.mean(); b/=b.std()
            nz=a+0.5*b; nz/=nz.std()
            for snr in [12,6]:
                rms=pp/np.sqrt(8)/10**(snr/20)
                y=x+mask*rms*nz
                y.astype(np.float32).tofile(f'{D}/m{r}s{snr:02d}_{k}.f32')
        for snr in [12,6]:
            jj=dict(name=f'm{r}s{snr:02d}',fs=fs,n=n,ref=j['ref'].tolist(),codes=j['codes'],leads=[])
            json.dump(jj,open(f'{D}/m{r}s{snr:02d}.meta.json','w'))
if __name__=="__main__": main()
