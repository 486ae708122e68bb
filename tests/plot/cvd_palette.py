"""Smallest pairwise CIE 1976 Delta E of fascicle PALETTE under Machado et al. 2009 colour-vision simulations (severity 1).
Prints the numbers tests/plot/labels.test.ts checks against. Run: python3 tests/plot/cvd_palette.py"""
import numpy as np
P=['#0072B2','#D55E00','#009E73','#CC79A7','#E69F00','#56B4E9','#000000']
M={'prot':[[0.152286,1.052583,-0.204868],[0.114503,0.786281,0.099216],[-0.003882,-0.048116,1.051998]],
'deut':[[0.367322,0.860646,-0.227968],[0.280085,0.672501,0.047413],[-0.011820,0.042940,0.968881]],
'trit':[[1.255528,-0.076749,-0.178779],[-0.078411,0.930809,0.147602],[0.004733,0.691367,0.303900]]}
def lin(c): c=c/255; return np.where(c<=0.04045,c/12.92,((c+0.055)/1.055)**2.4)
def lab(rgbl):
    X=np.array([[0.4124,0.3576,0.1805],[0.2126,0.7152,0.0722],[0.0193,0.1192,0.9505]])@rgbl
    w=np.array([0.95047,1,1.08883]); t=X/w
    f=np.where(t>(6/29)**3,np.cbrt(t),t/(3*(6/29)**2)+4/29)
    return np.array([116*f[1]-16,500*(f[0]-f[1]),200*(f[1]-f[2])])
rgb=[lin(np.array([int(c[i:i+2],16) for i in (1,3,5)],float)) for c in P]
for k,m in [('normal',np.eye(3))]+list(M.items()):
    L=[lab(np.clip(np.array(m)@c,0,1)) for c in rgb]
    d=min(np.linalg.norm(L[i]-L[j]) for i in range(len(P)) for j in range(i+1,len(P)))
    d4=min(np.linalg.norm(L[i]-L[j]) for i in range(4) for j in range(i+1,4))
    print(k, round(d,2), 'first4', round(d4,2))
