#!/usr/bin/env python3
# split.py RUNDIR: CPU seconds per phase (alone, beside readers) of the service and of the postgres processes, split
# into history-read backends (application_name fusion-history-reads), other backends, and the rest.
import json, os, sys
d = sys.argv[1]
lines = [l.split(' ', 1) for l in open(d + '/tool.out')]
rows = [(float(t), s) for t, s in lines if s.startswith('| ingest')]
hdr = [float(t) for t, s in lines if s.startswith('|---')][0]
reads = set(open(d + '/readpids').read().split())
backs = set(open(d + '/backpids').read().split())
recs = [json.loads(l) for l in open(d + '/cpu.jsonl')]
def at(t):
    return min(recs, key=lambda r: abs(r['t'] - t))
hz = float(os.sysconf('SC_CLK_TCK'))
bounds = [(hdr, rows[0][0]), (rows[0][0], rows[1][0])]
for (a, b), name in zip(bounds, ['alone', 'beside']):
    ra, rb = at(a), at(b)
    span = rb['t'] - ra['t']
    tot = (rb.get('tot', 0) - ra.get('tot', 0)) / hz
    pr = po = pa = 0.0
    for pid, v in rb['pg'].items():
        dv = (v - ra['pg'].get(pid, 0)) / hz
        if pid in reads: pr += dv
        elif pid in backs: po += dv
        else: pa += dv
    print(f"{name}: {span:.1f} s; service CPU s {tot:.1f}; postgres read backends {pr:.1f}, other backends {po:.1f}, server processes {pa:.1f}")

import re
snaps = []
cur = None
for l in open(d + '/rt.txt') if os.path.exists(d + '/rt.txt') else []:
    if l.startswith('T '):
        cur = {'t': float(l.split()[1])}; snaps.append(cur)
    elif cur is not None and ' ' in l:
        k, v = l.rsplit(' ', 1)
        k = re.sub(r'otel_scope_name="[^"]*",?', '', k).replace('{}', '')
        cur[k] = float(v)
snaps = [s for s in snaps if len(s) > 3]
if snaps:
    def near(t):
        return min(snaps, key=lambda r: abs(r['t'] - t))
    for (a, b), name in zip(bounds, ['alone', 'beside']):
        ra, rb = near(a), near(b)
        keys = [k for k in rb if k != 't' and ('total' in k)]
        print(name, f"({rb['t']-ra['t']:.1f} s):", ', '.join(f"{k.replace('dotnet_','')}={rb[k]-ra.get(k,0):.3g}" for k in sorted(keys)))
