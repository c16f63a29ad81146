import os, sys
import numpy as np
def bandpass(x,fs,lo=5.0,hi=25.0):
    # FFT band-pass (analysis only)
    X=np.fft.rfft(x); f=np.fft.rfftfreq(len(x),1/fs); X[(f<lo)|(f>hi)]=0; return np.fft.irfft(X,len(x))
