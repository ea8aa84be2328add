import sys, math
def epe(path):
    out={}; sec=None
    for line in open(path):
        if line.startswith('disparity'): sec='d'; continue
        if line.startswith('depth'): sec='z'; continue
        f=line.split()
        if sec=='d' and len(f)==6 and f[0].isdigit(): out[f[0]]=(float(f[2]),float(f[5]))
    return out
base=epe(sys.argv[1])
for p in sys.argv[2:]:
    o=epe(p); ks=sorted(set(base)&set(o))
    for i,name in ((0,'EPE'),(1,'bad-3')):
        d=[o[k][i]-base[k][i] for k in ks]; m=sum(d)/len(d); sd=math.sqrt(sum((x-m)**2 for x in d)/(len(d)-1)); se=sd/math.sqrt(len(d))
        print("%s vs %s: %s mean diff %+.4f ± %.4f (SE, %d pairs), better on %d"%(p,sys.argv[1],name,m,se,len(d),sum(x<0 for x in d)))
