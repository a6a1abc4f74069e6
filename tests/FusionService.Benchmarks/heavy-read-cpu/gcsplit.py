#!/usr/bin/env python3
# gcsplit.py RUNDIR: per phase (alone, beside readers), the GC pauses of the service and of the load tool from their
# gc-events lists (svc.gc.tsv, tool.gc.tsv: Unix start, generation, type, suspend ms, pause ms): how many, by
# generation, their sum, the largest, and the time the runtime took to stop the threads (sum and largest).
import os, sys
d = sys.argv[1]
lines = [l.split(' ', 1) for l in open(d + '/tool.out')]
rows = [float(t) for t, s in lines if s.startswith('| ingest')]
hdr = [float(t) for t, s in lines if s.startswith('|---')][0]
for who in ['svc', 'tool']:
    path = f"{d}/{who}.gc.tsv"
    if not os.path.exists(path):
        continue
    ev = [tuple(float(x) for x in l.split('\t')) for l in open(path) if l.strip()]
    for (a, b), name in zip([(hdr, rows[0]), (rows[0], rows[1])], ['alone', 'beside']):
        p = [e for e in ev if a <= e[0] < b]
        pauses = sorted(e[4] for e in p)
        gens = [sum(1 for e in p if int(e[1]) == g) for g in (0, 1, 2)]
        over = lambda ms: sum(1 for x in pauses if x > ms)
        print(f"{who} {name} ({b - a:.1f} s): {len(p)} pauses (gen0/1/2 {gens[0]}/{gens[1]}/{gens[2]}), "
              f"sum {sum(pauses):.0f} ms, largest {max(pauses, default=0):.1f} ms, over 10/25/50 ms {over(10)}/{over(25)}/{over(50)}; "
              f"suspending: sum {sum(e[3] for e in p):.1f} ms, largest {max((e[3] for e in p), default=0):.1f} ms")
