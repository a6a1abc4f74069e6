#!/usr/bin/env python3
# cpusample.py SVC_PID OUT: every 0.5 s, cumulative CPU ticks of the service (split by thread nice value) and of
# every postgres process, and the machine's busy ticks (all cores, /proc/stat), as JSON lines
# {"t": unix_s, "svc": {nice: ticks}, "pg": {pid: ticks}, "machine": ticks}, and the time each spent runnable
# but waiting for a core (schedstat, ns): "svcwait": {thread name: ns}, "pgwait": {pid: ns}.
import json, os, sys, time
svc, out = int(sys.argv[1]), sys.argv[2]
def stat(path):
    with open(path) as f:
        s = f.read()
    r = s[s.rindex(')') + 2:].split()
    return r  # r[0]=state (field 3); utime = field 14 -> r[11], stime r[12], nice field 19 -> r[16]
with open(out, 'w') as f:
    while True:
        try:
            os.kill(svc, 0)
        except OSError:
            break
        rec = {"t": time.time(), "svc": {}, "pg": {}}
        with open('/proc/stat') as st:
            cpu = [int(x) for x in st.readline().split()[1:]]
        rec["machine"] = sum(cpu[:8]) - cpu[3] - cpu[4]  # busy ticks of all cores: all but idle and iowait
        try:
            r = stat(f"/proc/{svc}/stat")
            rec["tot"] = int(r[11]) + int(r[12])
            for tid in os.listdir(f"/proc/{svc}/task"):
                try:
                    r = stat(f"/proc/{svc}/task/{tid}/stat")
                except OSError:
                    continue
                n = r[16]
                rec["svc"][n] = rec["svc"].get(n, 0) + int(r[11]) + int(r[12])
                # Time spent runnable but waiting for a core (schedstat, ns), by thread name: scheduling delay.
                try:
                    with open(f"/proc/{svc}/task/{tid}/schedstat") as ss:
                        wait = int(ss.read().split()[1])
                    with open(f"/proc/{svc}/task/{tid}/comm") as c:
                        name = c.read().strip()
                except OSError:
                    continue
                name = 'fusion-replay/smooth' if name.startswith('fusion-') else name
                rec.setdefault("svcwait", {})[name] = rec.get("svcwait", {}).get(name, 0) + wait
        except OSError:
            break
        for pid in os.listdir('/proc'):
            if not pid.isdigit():
                continue
            try:
                with open(f"/proc/{pid}/comm") as c:
                    if c.read().strip() != 'postgres':
                        continue
                r = stat(f"/proc/{pid}/stat")
                rec["pg"][pid] = int(r[11]) + int(r[12])
                with open(f"/proc/{pid}/schedstat") as ss:
                    rec.setdefault("pgwait", {})[pid] = int(ss.read().split()[1])
            except OSError:
                continue
        f.write(json.dumps(rec) + "\n"); f.flush()
        time.sleep(0.5)
