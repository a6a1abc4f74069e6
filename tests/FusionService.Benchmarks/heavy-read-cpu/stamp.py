#!/usr/bin/env python3
# Prefixes each line of stdin with the Unix time it arrived.
import sys, time
for line in sys.stdin:
    sys.stdout.write("%.3f %s" % (time.time(), line)); sys.stdout.flush()
