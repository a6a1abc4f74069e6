#!/usr/bin/env python3
"""schedsplit.py OUT_DIR: waits for a core per group of threads, from sched.sh's `perf sched timehist` of each phase.

Groups: the service (svc.pid), ingest's PostgreSQL backends (every postgres process but the history reads' backends,
readpids), those read backends, and the rest. For the beside phase also the largest waits of the service and of
ingest's backends, with the processor time each core gave to whom during each wait; and per phase the machine's
user, nice (autogroup nice and SCHED_IDLE tasks count here) and idle time from /proc/stat."""
import collections
import os
import re
import sys

out = sys.argv[1]
svc = open(f"{out}/svc.pid").read().strip()
reads = set(open(f"{out}/readpids").read().split())
row = re.compile(r'^\s*(\d+\.\d+)\s+\[(\d+)\]\s+(.*)\[(\d+)(?:/(\d+))?\]\s+([\d.]+)\s+([\d.]+)\s+([\d.]+)')


def events(phase):
    for line in open(f"{out}/{phase}.th"):
        m = row.match(line)
        if m:
            t, cpu, name, tid, pid, _, delay, run = m.groups()
            yield float(t), int(cpu), name.strip(), tid, pid or tid, float(delay), float(run)


def group(e):
    _, _, name, tid, pid, _, _ = e
    if pid == svc:
        return "service"
    if name.startswith("postgres"):
        return "history-read backends" if tid in reads else "ingest backends"
    return "other"


for phase in ("alone", "beside"):
    ev = list(events(phase))
    waits = collections.defaultdict(list)
    for e in ev:
        waits[group(e)].append(e[5])
    print(f"== {phase}")
    for g, v in sorted(waits.items()):
        v.sort()
        n = len(v)
        print(f"  {g:22s} {n:7d} runs; wait for a core ms: mean {sum(v) / n:.3f}, p99 {v[int(n * .99)]:.3f}, "
              f"p99.9 {v[int(n * .999)]:.3f}, largest {v[-1]:.3f}")
    if not os.path.exists(f"{out}/{phase}.stat1"):
        print("  /proc/stat: not recorded")
    else:
        s0 = [int(x) for x in open(f"{out}/{phase}.stat0").split()[1:6]]
        s1 = [int(x) for x in open(f"{out}/{phase}.stat1").split()[1:6]]
        user, nice, system, idle, iowait = (b - a for a, b in zip(s0, s1))
        total = user + nice + system + idle + iowait
        print(f"  /proc/stat: user {user / total:.0%}, nice {nice / total:.0%}, system {system / total:.0%}, "
              f"idle {idle / total:.0%}, iowait {iowait / total:.0%}")
    if phase != "beside":
        continue
    for t, cpu, name, tid, pid, delay, run in sorted(
            (e for e in ev if group(e) in ("service", "ingest backends")), key=lambda e: -e[5])[:6]:
        start, end = t - (run + delay) / 1000, t - run / 1000
        ran = collections.Counter()
        for o in ev:
            overlap = min(o[0], end) - max(o[0] - o[6] / 1000, start)
            if overlap > 0:
                ran[(o[1], group(o) if group(o) != "other" else f"{o[2][:16]}[{o[4]}]")] += overlap * 1000
        print(f"  waited {delay:.1f} ms on core {cpu}: {name}[{tid}]; meanwhile "
              + ", ".join(f"core {c} {who} {ms:.1f} ms" for (c, who), ms in ran.most_common(8)))
