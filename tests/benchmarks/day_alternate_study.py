"""Why the day method misses under alternate routing on the campus day (issue 20, item 3):
measurements for docs/measurements/daily.md section 8. Not collected by pytest; slow
(about 3 minutes, most of it the link-chain prototype at the plan near the targets).

    python tests/benchmarks/day_alternate_study.py

1. Peakedness per period: day-fpa's blocking by period times the ratio of the static peaked
   fixed point to the static fixed point at each demand's infinite-server offered load
   m' = lambda - m / h (the modified offered load, Jagerman 1975), averaged over each period;
   also the quasi-static figures themselves.
2. P-SPORTS alone (two Poisson streams, no peakedness at all) against its exact 2-D transient
   chain (scipy.sparse.linalg.expm_multiply, independent of netdim), and one park offered
   the same sharp wave against netdim's exact chain (day-exact).
3. A prototype: the reduced-load fixed point over the day whose links are solved by their own
   transient chains instead of a law closed from the mean.

Simulated figures: daily.md section 6 (1000 days, 95 % intervals). Demo data throughout.
"""

import time
from dataclasses import replace

import numpy as np
import scipy.sparse as sp
from scipy.integrate import simpson
from scipy.linalg import expm
from scipy.sparse.linalg import expm_multiply

import netdim
import netdim.errors

NET = netdim.read_network("examples/campus_day.yaml")
SIM = {  # daily.md section 6 (1000 days): worst-period blocking and its 95 % interval
    (80, 80, 140, 0, 0): {"library-visitors": (0.03506, 0.03058, 0.03954),
                          "labs-staff": (0.01966, 0.01513, 0.02418),
                          "event-guests": (0.03562, 0.03116, 0.04008)},
    (80, 80, 60, 50, 20): {"event-guests": (0.34557, 0.33589, 0.35525)},
}


def ratio_text(v, s, lo, hi):
    return f"{v:.5f} ({v / s:.3f}{'' if lo <= v <= hi else ' *'})"


# -- 1. peakedness per period -----------------------------------------------------------------
def mol_traffic(net, grid=4):
    rates = net.day.rate_array()
    hold = np.array([d.holding for d in net.demands])
    m = np.zeros(len(hold))
    out = np.zeros(rates.shape + (grid,))
    for p in range(rates.shape[1]):
        a = rates[:, p] * hold
        for g in range(grid):
            t = (g + 0.5) / grid * net.day.period
            out[:, p, g] = a + (m - a) * np.exp(-t / hold)
        m = a + (m - a) * np.exp(-net.day.period / hold)
    return out


def static_blocking(net, caps, traffic, method, failed):
    static = replace(net, day=None, demands=tuple(
        replace(d, traffic=float(max(t, 1e-9))) for d, t in zip(net.demands, traffic,
                                                                 strict=True)))
    try:
        return np.asarray(netdim.evaluate(static, caps, method=method).blocking)
    except netdim.errors.ConvergenceError:
        failed[0] += 1  # ratio 1 where the peaked fixed point does not converge
        return np.asarray(netdim.evaluate(static, caps, method="fixed-point").blocking)


def peakedness(net, caps):
    caps = np.asarray(caps)
    rates = net.day.rate_array()
    m = mol_traffic(net)
    fp, pk, failed = np.zeros(m.shape), np.zeros(m.shape), [0]
    for p in range(m.shape[1]):
        for g in range(m.shape[2]):
            fp[:, p, g] = static_blocking(net, caps, m[:, p, g], "fixed-point", failed)
            pk[:, p, g] = static_blocking(net, caps, m[:, p, g], "peaked-fixed-point", failed)
    fpa = np.asarray(netdim.evaluate(net, caps, method="day-fpa").day.blocking)
    qs_fp, qs_pk = fp.mean(axis=2), pk.mean(axis=2)
    ratio = np.divide(qs_pk, qs_fp, out=np.ones_like(qs_pk), where=qs_fp > 1e-12)

    def peak(b):
        return np.where(rates > 0, b, -1).max(axis=1)

    return {"fpa": peak(fpa), "quasi-static fp": peak(qs_fp),
            "quasi-static peaked": peak(qs_pk),
            "fpa x peaked/fp": peak(np.clip(fpa * ratio, 0, 1))}, failed[0], m.size // len(m)


# -- 2. one park, exactly ---------------------------------------------------------------------
def two_class_park(ls, le, cap, res, h1, h2, steps=40):
    """Worst period and lost share of the overflow class (le) on one park: first-choice
    stream ls (holding h1, any free space) and overflow stream le (h2, refused at cap - res
    busy), 1-h periods, empty at the start; exact 2-D chain."""
    states = [(a, b) for a in range(cap + 1) for b in range(cap + 1 - a)]
    index = {s: i for i, s in enumerate(states)}
    tot = np.array([a + b for a, b in states])

    def generator(l1, l2):
        rows, cols, vals = [], [], []
        for i, (a, b) in enumerate(states):
            for ok, to, rate in ((a + b < cap, (a + 1, b), l1),
                                 (a + b < cap - res, (a, b + 1), l2),
                                 (a > 0, (a - 1, b), a / h1), (b > 0, (a, b - 1), b / h2)):
                if ok and rate > 0:
                    rows.append(i)
                    cols.append(index[to])
                    vals.append(rate)
        q = sp.csr_matrix((vals, (rows, cols)), shape=(len(states),) * 2)
        return (q - sp.diags(np.asarray(q.sum(axis=1)).ravel())).T.tocsc()

    p = np.zeros(len(states))
    p[index[(0, 0)]] = 1.0
    refused = tot >= cap - res
    b = []
    for k in range(len(ls)):
        pts = expm_multiply(generator(ls[k], le[k]), p, start=0.0, stop=1.0, num=steps + 1)
        b.append(simpson(pts[:, refused].sum(axis=1), dx=1 / steps))
        p = pts[-1]
    b = np.array(b)
    return np.where(le > 0, b, -1).max(), float((le * b).sum() / le.sum())


def park_file(ls, le, cap, res, h2):
    return netdim.loads_network(f"""
name: one park
routing: {{policy: alternate, reservation: {res}}}
sites: [R, C]
links:
  - {{id: S, ends: [R, C], capacity: {cap}}}
  - {{id: X, ends: [R, C], capacity: 0}}
demands:
  - {{id: first, between: [R, C], rates: {ls.tolist()}, holding: 1.5, routes: [[S]]}}
  - {{id: over, between: [R, C], rates: {le.tolist()}, holding: {h2}, routes: [[X], [S]]}}
""")


# -- 3. the link-chain prototype ----------------------------------------------------------------
G = 8  # sub-steps per period


def link_chains(net, caps, iters=60, damp=0.5, tol=1e-7):
    caps = np.asarray(caps, int)
    lam = net.day.rate_array()
    D, P = lam.shape
    dt = net.day.period / G
    T = P * G
    L = len(caps)
    res = net.reservations()
    thr = caps - res
    alt = net.routing.policy == "alternate"
    # steps: (demand, route rank, link, holding)
    routes = []
    for d in net.demands:
        rs = d.routes if alt else d.routes[:1]
        routes.append([(r.links, r.holdings) for r in rs])
    # blocking per link, stream (0 first, 1 overflow), time step (time-averaged)
    B = np.zeros((L, 2, T))
    for it in range(iters):  # noqa: B007 - reported
        # arrival rates per link and stream, and per-link mean service rate via carried loads
        arr = np.zeros((L, 2, T))
        carried = np.zeros((L, T))
        svc = np.zeros((L, T))  # sum c/h
        dem_block = np.zeros((D, T))
        for i in range(D):
            reach = np.ones(T)
            loss_all = np.ones(T)
            for rank, (links, holds) in enumerate(routes[i]):
                s = 0 if rank == 0 else 1
                passb = np.ones(T)
                for j in links:
                    passb = passb * (1 - (1.0 if caps[j] == 0 else B[j, s]))
                lam_t = np.repeat(lam[i], G) * reach
                for j, h in zip(links, holds, strict=True):
                    other = passb / np.maximum(1 - (1.0 if caps[j] == 0 else B[j, s]), 1e-300)
                    arr[j, s] += lam_t * other
                    # carried load of this step: exact for piecewise-constant admitted rate
                    adm = lam_t * passb
                    c = np.zeros(T)
                    x = 0.0
                    e = np.exp(-dt / h)
                    for t in range(T):
                        x0 = x
                        x = x * e + adm[t] * h * (1 - e)
                        c[t] = 0.5 * (x0 + x)
                    carried[j] += c
                    svc[j] += c / h
                route_loss = 1 - passb
                loss_all = loss_all * route_loss
                reach = reach * route_loss
            dem_block[i] = loss_all
        mu = np.where(carried > 1e-12, svc / np.maximum(carried, 1e-300), np.nan)
        # link chains
        newB = np.ones((L, 2, T))
        for j in range(L):
            C = caps[j]
            if C == 0:
                continue
            k = np.arange(C + 1)
            p = np.zeros(C + 1)
            p[0] = 1.0
            # a mean service rate where nothing is carried: the first one seen (any)
            mj = mu[j]
            fill = np.nanmean(mj) if np.isfinite(mj).any() else 1.0
            mj = np.where(np.isfinite(mj), mj, fill)
            for t in range(T):
                birth = np.where(k < thr[j], arr[j, 0, t] + arr[j, 1, t], arr[j, 0, t])
                birth[C] = 0.0
                death = k * mj[t]
                Q = np.diag(-(birth + death)) + np.diag(birth[:-1], -1) + np.diag(death[1:], 1)
                p1 = expm(Q * dt) @ p
                pa = 0.5 * (p + p1)  # trapezoid: time average of the law over the step
                newB[j, 0, t] = pa[C]
                newB[j, 1, t] = pa[max(thr[j], 0):].sum() if thr[j] >= 0 else 1.0
                p = np.maximum(p1, 0)
                p /= p.sum()
        change = float(np.max(np.abs(newB - B)))
        B = damp * newB + (1 - damp) * B
        if change < tol:
            break
    blocking = dem_block.reshape(D, P, G).mean(axis=2)
    live = lam > 0
    peak = np.where(live, blocking, -1).max(axis=1)
    lost = (lam * blocking).sum(axis=1) / np.maximum(lam.sum(axis=1), 1e-300)
    return blocking, peak, lost, it + 1, change




def main():
    print("1. Peakedness per period (worst-period blocking; ratio to the simulation; * outside "
          "its interval)")
    for caps, sims in SIM.items():
        t0 = time.process_time()
        figs, failed, grid = peakedness(NET, caps)
        print(f"   capacities {caps} ({time.process_time() - t0:.1f} s; peaked not converged "
              f"at {failed} of {grid} grid times)")
        for did, (s, lo, hi) in sims.items():
            i = NET.demand_ids.index(did)
            print(f"     {did:17s} sim {s:.5f}  " + "  ".join(
                f"{k} {ratio_text(v[i], s, lo, hi)}" for k, v in figs.items()))
    print("2. P-SPORTS at 140 alone: sports visitors first (1.5 h), event guests overflow")
    rates = NET.day.rate_array()
    ls = rates[NET.demand_ids.index("sports-visitors")]
    le = rates[NET.demand_ids.index("event-guests")]
    for res in (0, 2, 4):
        for h2 in (3.0, 1.5):
            ex = two_class_park(ls, le, 140, res, 1.5, h2)
            d = netdim.evaluate(park_file(ls, le, 140, res, h2), method="day-fpa").day
            print(f"   reservation {res}, event stay {h2} h: exact worst {ex[0]:.5f} lost "
                  f"{ex[1]:.5f}; day-fpa / exact {d.peak_blocking[1] / ex[0]:.3f} / "
                  f"{d.lost_fraction[1] / ex[1]:.3f}")
    for cap in (140, 120):
        one = netdim.loads_network(
            f"name: one\nsites: [R, C]\nlinks: [{{id: S, ends: [R, C], capacity: {cap}}}]\n"
            f"demands: [{{id: all, between: [R, C], rates: {(ls + le).tolist()}, "
            "holding: 1.5}]\n")
        ex = netdim.evaluate(one, method="day-exact").day
        fp = netdim.evaluate(one, method="day-fpa").day
        print(f"   one stream (both waves, 1.5 h) on {cap}: exact worst {ex.peak_blocking[0]:.5f}"
              f" lost {ex.lost_fraction[0]:.5f}; day-fpa / exact "
              f"{fp.peak_blocking[0] / ex.peak_blocking[0]:.3f} / "
              f"{fp.lost_fraction[0] / ex.lost_fraction[0]:.3f}")
    print("3. Link chains over the day (prototype)")
    for caps, sims in SIM.items():
        t0 = time.process_time()
        _, peak, _, its, change = link_chains(NET, caps)
        print(f"   capacities {caps}: {its} iterations (last change {change:.1e}), "
              f"{time.process_time() - t0:.1f} s")
        for did, (s, lo, hi) in sims.items():
            i = NET.demand_ids.index(did)
            print(f"     {did:17s} sim {s:.5f}  link chains {ratio_text(peak[i], s, lo, hi)}")


if __name__ == "__main__":
    main()
