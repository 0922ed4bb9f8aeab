"""An independent N-body referee for the dynamics tests (not archsys code).

A deliberately plain rebound set-up, written for the tests and sharing nothing with
archsys.physics.nbody: each draw is integrated with WHFast (dt = P_inner / 30) and MEGNO, and after
every quarter orbit of the innermost planet the distances between all pairs of planets are compared with their
mutual Hill radius R_H,m = ((m_i + m_j) / 3 M_star)^(1/3) (a_i + a_j) / 2 (Chambers, Wetherill & Boss
1996), and the osculating orbits are checked for crossing and escape (e >= 1).  "Stable" is the
definition of issue 18: no encounter within one mutual Hill radius, no crossing or escape, final MEGNO
< 2.5 (MEGNO -> 2 for quasi-periodic orbits; Cincotta & Simo 2000).  rebound: Rein & Liu 2012.
"""
import itertools
import math

import numpy as np

G_AU_MSUN_DAY = 2.959122082855911e-4   # IAU 2015 nominal GM_sun in au^3 / day^2


def referee(m_star, m, a, e, inc, omega, node, M0, n_orbits, megno=True):
    """(survived, regular) booleans for each draw (rows of the arrays)."""
    import rebound
    n = len(m)
    survived = np.ones(n, bool)
    regular = np.ones(n, bool)
    for k in range(n):
        order = np.argsort(a[k])
        sim = rebound.Simulation()
        sim.G = G_AU_MSUN_DAY
        sim.add(m=float(m_star[k]))
        for j in order:
            sim.add(m=float(m[k][j]), a=float(a[k][j]), e=float(e[k][j]), inc=float(inc[k][j]),
                    omega=float(omega[k][j]), Omega=float(node[k][j]), M=float(M0[k][j]))
        sim.move_to_com()
        p_in = 2 * math.pi * math.sqrt(float(a[k][order[0]]) ** 3 / (G_AU_MSUN_DAY * float(m_star[k])))
        sim.integrator = "whfast"
        sim.dt = p_in / 30.0
        if megno:
            sim.init_megno(seed=k + 1)
        mm = np.asarray(m[k])[order]
        aa = np.asarray(a[k])[order]
        pairs = [(i, j, np.cbrt((mm[i] + mm[j]) / (3 * m_star[k])) * 0.5 * (aa[i] + aa[j]))
                 for i, j in itertools.combinations(range(len(mm)), 2)]
        ps = sim.particles
        ok = True
        for step in range(1, 4 * int(n_orbits) + 1):
            sim.integrate(0.25 * step * p_in, exact_finish_time=0)
            for i, j, rh in pairs:
                d = ps[i + 1] - ps[j + 1]
                if d.x * d.x + d.y * d.y + d.z * d.z < rh * rh:
                    ok = False
                    break
            if ok and step % 40 == 0:
                orbs = sim.orbits()
                if any(o.e >= 1 for o in orbs) or any(
                        orbs[i].a * (1 + orbs[i].e) > orbs[i + 1].a * (1 - orbs[i + 1].e)
                        for i in range(len(orbs) - 1)):
                    ok = False
            if not ok:
                break
        survived[k] = ok
        regular[k] = ok and (not megno or sim.megno() < 2.5)
    return survived, regular
