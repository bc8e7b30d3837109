#!/usr/bin/env python3
"""A Hopfield network as a recallscape model program (standard library only).

Stores random +-1 patterns with the Hebbian rule, cues the first one with a
fraction of its units flipped, and updates units one at a time in random
order until nothing changes. Speaks recallscape's line protocol: one JSON
request per line on stdin, one JSON reply per line on stdout. Anything else
goes to stderr.
"""
import json
import random
import sys


def run(params, seed, want_trace):
    units = params["units"]
    count = params["patterns"]
    rng = random.Random(seed)
    patterns = [[rng.choice((-1, 1)) for _ in range(units)] for _ in range(count)]

    # Hebbian weights w_ij = (1/N) sum_mu xi_i xi_j, no self-connections.
    weights = [[0.0] * units for _ in range(units)]
    for xi in patterns:
        for i in range(units):
            row = weights[i]
            scaled = xi[i] / units
            for j in range(units):
                row[j] += scaled * xi[j]
    for i in range(units):
        weights[i][i] = 0.0

    target = patterns[0]
    state = list(target)
    for i in rng.sample(range(units), round(params["cueNoise"] * units)):
        state[i] = -state[i]

    def overlaps():
        return [sum(s * x for s, x in zip(state, xi)) / units for xi in patterns]

    rows = [overlaps()] if want_trace else []
    order = list(range(units))
    sweeps = 0
    stable = False
    while sweeps < params["maxSweeps"]:
        sweeps += 1
        rng.shuffle(order)
        changed = 0
        for i in order:
            field = sum(w * s for w, s in zip(weights[i], state))
            new = 1 if field >= 0 else -1
            if new != state[i]:
                state[i] = new
                changed += 1
        if want_trace:
            rows.append(overlaps())
        if changed == 0:
            stable = True
            break

    overlap = sum(s * x for s, x in zip(state, target)) / units
    metrics = {
        "recalled": overlap >= params["recallOverlap"],
        "overlap": overlap,
        "sweeps": sweeps,
        "stable": stable,
    }
    trace = None
    if want_trace:
        trace = [{
            "title": "overlap with every stored pattern, one row per update sweep",
            "stepMs": 1,
            "seriesLabels": ["pattern %d" % k for k in range(count)],
            "rows": rows,
        }]
    return metrics, trace


def main():
    while True:
        line = sys.stdin.readline()
        if line == "":
            return  # recallscape closed the pipe: stop
        key = None
        try:
            request = json.loads(line)
            key = request["key"]
            metrics, trace = run(request["params"], request["seed"], request.get("trace", False))
            reply = {"key": key, "metrics": metrics}
            if trace is not None:
                reply["trace"] = trace
        except Exception as error:  # reported to recallscape as this job's failure
            reply = {"key": key, "error": "%s: %s" % (type(error).__name__, error)}
        sys.stdout.write(json.dumps(reply) + "\n")
        sys.stdout.flush()


if __name__ == "__main__":
    main()
