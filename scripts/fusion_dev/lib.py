import os, sys
import json, numpy as np, glob, os
D=os.environ.get('FUSION_DEV_DIR','/tmp/fusion-dev')
def load(name):
    j=json.load(open(f'{D}/{name}.json'))
    for k,l in enumerate(j['leads']):
        l['pt']=np.array(l['pt'],dtype=np.int64); l['el']=np.array(l['el'],dtype=np.int64)
    j['ref']=np.array(j['ref'],dtype=np.int64)
    return j
def sig(name,k):
    return np.fromfile(f'{D}/{name}_{k}.f32',dtype=np.float32).astype(np.float64)
def match(ref,det,tol):
    # greedy nearest matching in time order; returns matched flags
    i=j=0; mr=np.zeros(len(ref),bool); md=np.zeros(len(det),bool)
    while i<len(ref) and j<len(det):
        d=det[j]-ref[i]
        if abs(d)<=tol:
            # check if next det is closer to this ref
            if j+1<len(det) and abs(det[j+1]-ref[i])<abs(d) and not (i+1<len(ref) and abs(det[j+1]-ref[i+1])<abs(det[j+1]-ref[i])):
                j+=1; continue
            mr[i]=md[j]=True; i+=1; j+=1
        elif d<0: j+=1
        else: i+=1
    return mr,md
def score(j,det,start_s=300.0):
    fs=j['fs']; tol=int(round(0.15*fs)); st=int(start_s*fs)
    ref=j['ref']; det=np.asarray(det)
    mr,md=match(ref,det,tol)
    rin=ref>=st; din=det>=st
    tp=int((mr&rin).sum()); fn=int((~mr&rin).sum()); fp=int((~md&din).sum())
    return tp,fp,fn
def noisy_mask(fs,n):
    # nstdb: noise from 300 s, 120 s on, 120 s off
    t=np.arange(n)/fs
    return (t>=300)&(((t-300)%240)<120)
