#!/usr/bin/env python3
# summary.py OUT_DIR...: one line per run of run.sh: acknowledgements and latencies per phase, processor time per
# acknowledgement (alone) and per smoothed read (beside, less the acknowledgements' share at the alone rate).
import os, re, subprocess, sys
here = os.path.dirname(os.path.abspath(__file__))
for d in sys.argv[1:]:
    out = subprocess.run(['python3', os.path.join(here, 'split.py'), d], capture_output=True, text=True).stdout
    rows = [l.split(' ', 1)[1] for l in open(d + '/tool.out') if ' | ingest' in l]
    def cells(r): return [c.strip() for c in r.strip().strip('|').split('|')]
    a, b = cells(rows[0]), cells(rows[1])
    m = re.findall(r'service CPU s ([\d.]+).*?read backends ([\d.]+), other backends ([\d.]+)', out)
    (sa, ra, oa), (sb, rb, ob) = [tuple(map(float, x)) for x in m]
    reads = int(re.search(r'200: (\d+)', b[6]).group(1)) if '200:' in b[6] else 0
    acka, ackb = int(a[1]), int(b[1])
    per_ack_svc = sa / acka * 1000; per_ack_pg = oa / acka * 1000
    read_svc = (sb - ackb * per_ack_svc / 1000) / max(reads, 1)
    load = open(d + '/start').read().split()[1:4]
    print(f"{d}: load {' '.join(load)} | alone acks {acka} p50 {a[3]} p99 {a[4]} | beside acks {ackb} p50 {b[3]} p99 {b[4]} max {b[5]} reads {b[6]} | per ack: svc {per_ack_svc:.2f} ms pg {per_ack_pg:.2f} ms | per read: svc {read_svc:.2f} s, read backends {rb/max(reads,1):.2f} s")
