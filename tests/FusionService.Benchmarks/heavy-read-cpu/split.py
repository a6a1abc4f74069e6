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
    if 'svcwait' in rb:
        # Scheduling delay: seconds runnable but waiting for a core, per thread name of the service and per kind of backend.
        w = {k: (v - ra.get('svcwait', {}).get(k, 0)) / 1e9 for k, v in rb['svcwait'].items()}
        wr = sum((v - ra.get('pgwait', {}).get(pid, 0)) / 1e9 for pid, v in rb.get('pgwait', {}).items() if pid in reads)
        wo = sum((v - ra.get('pgwait', {}).get(pid, 0)) / 1e9 for pid, v in rb.get('pgwait', {}).items() if pid in backs)
        top = ', '.join(f"{k} {v:.2f}" for k, v in sorted(w.items(), key=lambda kv: -kv[1])[:6])
        print(f"{name}: waiting for a core, s: service {sum(w.values()):.2f} ({top}); read backends {wr:.2f}; other backends {wo:.2f}")
    mach = (rb.get('machine', 0) - ra.get('machine', 0)) / hz
    print(f"{name}: {span:.1f} s; service CPU s {tot:.1f}; postgres read backends {pr:.1f}, other backends {po:.1f}, server processes {pa:.1f}"
          + (f"; machine busy {mach:.1f} s of {os.cpu_count() * span:.1f}" if 'machine' in rb else ''))

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
commits = {}
if snaps:
    def near(t):
        return min(snaps, key=lambda r: abs(r['t'] - t))
    for (a, b), name in zip(bounds, ['alone', 'beside']):
        ra, rb = near(a), near(b)
        keys = [k for k in rb if k != 't' and ('total' in k)]
        print(name, f"({rb['t']-ra['t']:.1f} s):", ', '.join(f"{k.replace('dotnet_','')}={rb[k]-ra.get(k,0):.3g}" for k in sorted(keys)))
        # Inside the service: an ingest request's time from Kestrel's view, and one group commit (COPY and transaction).
        def delta(prefix, suffix):
            ks = [k for k in rb if k.startswith(prefix) and k.split('{')[0].endswith(suffix)]
            return sum(rb[k] - ra.get(k, 0) for k in ks)
        n = delta('http_server_request_duration_seconds', '_count'); c = delta('fusion_ingest_commit_duration_seconds', '_count')
        commits[name] = c
        if n and c:
            print(f"{name}: ingest request in the service, mean {delta('http_server_request_duration_seconds', '_sum') / n * 1000:.1f} ms ({n:.0f}); "
                  f"group commit mean {delta('fusion_ingest_commit_duration_seconds', '_sum') / c * 1000:.1f} ms ({c:.0f})")

# What the backends were doing in the samples of pg_stat_activity (every 0.2 s): per phase, per kind of backend, the
# share of samples in each state and wait (cpu: active with no wait event, i.e. running or waiting for a core).
if os.path.exists(d + '/waits.txt'):
    from collections import Counter
    samples = []
    for l in open(d + '/waits.txt'):
        f = l.rstrip('\n').split('|')
        if len(f) == 5:
            samples.append((float(f[0]), f[1], f[2], f[3] + ':' + f[4]))
    for (a, b), name in zip(bounds, ['alone', 'beside']):
        for kind, pick in [('ingest backends', lambda app: app not in ('fusion-history-reads', 'wait-sampler')),
                           ('read backends', lambda app: app == 'fusion-history-reads')]:
            c = Counter((st if st != 'active' else 'active ' + w) for t, app, st, w in samples if a <= t < b and pick(app))
            n = sum(c.values())
            if n:
                print(f"{name}: {kind}: " + ', '.join(f"{k} {v / n * 100:.0f} %" for k, v in c.most_common(6)) + f" ({n} samples)")
        # Backend-milliseconds per group commit spent idle in transaction (waiting for the service's next statement),
        # summed over ingest's connections; the sampling interval from the distinct sample times.
        times = sorted({round(t, 1) for t, *_ in samples if a <= t < b})
        idle_tx = sum(1 for t, app, st, w in samples if a <= t < b and app not in ('fusion-history-reads', 'wait-sampler') and st == 'idle in transaction')
        if times and commits.get(name):
            print(f"{name}: ingest backends idle in transaction {idle_tx * (b - a) / len(times) / commits[name] * 1000:.1f} ms per group commit")
