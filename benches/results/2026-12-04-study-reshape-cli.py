"""The CLI sweep measurement of 2026-12-04-study-reshape.md: a 200-point supply
sweep of scenarios/cabin-light-9-32v.json, 1 and 2 threads, with and without
plots, the before and after binaries interleaved, best of R rounds (argument,
default 15); the ceiling is two independent 1-thread --no-plots processes at
once against one. Edit `bins` for the binaries to compare; run from the
repository root: python3 benches/results/2026-12-04-study-reshape-cli.py 15
"""
import subprocess, time, sys, collections
SC='scenarios/cabin-light-9-32v.json'
bins={'before':'/work/wt/chopwave-before','after':'target/release/chopwave'}
R=int(sys.argv[1]) if len(sys.argv)>1 else 15
best=collections.defaultdict(lambda: 9e9)
def cmd(b,t,plots,out):
    c=[bins[b],'sweep',SC,'--vary','supply.voltage_v=9:32:200','--threads',str(t),'-q','--out',out]
    if not plots: c.append('--no-plots')
    return c
for r in range(R):
    for b in bins:
        for plots in (True,False):
            for t in (1,2):
                s=time.perf_counter(); subprocess.run(cmd(b,t,plots,'/tmp/sweep-i-'+b),stdout=subprocess.DEVNULL,stderr=subprocess.DEVNULL,check=True); d=time.perf_counter()-s
                k=(b,plots,t); best[k]=min(best[k],d)
        # ceiling: one 1-thread no-plots process, then two at once
        s=time.perf_counter(); subprocess.run(cmd(b,1,False,'/tmp/sweep-c1-'+b),stdout=subprocess.DEVNULL,stderr=subprocess.DEVNULL); one=time.perf_counter()-s
        s=time.perf_counter(); ps=[subprocess.Popen(cmd(b,1,False,f'/tmp/sweep-c{j}-'+b),stdout=subprocess.DEVNULL,stderr=subprocess.DEVNULL) for j in (1,2)]; [p.wait() for p in ps]; two=time.perf_counter()-s
        best[(b,'one')]=min(best[(b,'one')],one); best[(b,'two')]=min(best[(b,'two')],two)
for b in bins:
    for plots in (True,False):
        t1,t2=best[(b,plots,1)],best[(b,plots,2)]
        print(f"{b:6} {'plots   ' if plots else 'no-plots'} 1 thread {t1*1e3:6.1f} ms, 2 threads {t2*1e3:6.1f} ms, speed-up {t1/t2:.2f}x")
    print(f"{b:6} ceiling one {best[(b,'one')]*1e3:.1f} ms, two at once {best[(b,'two')]*1e3:.1f} ms, ratio {2*best[(b,'one')]/best[(b,'two')]:.2f}x")
