"""Build tests/data/dynamics/chain3_resonant.toml: a three-planet 3:2, 3:2 resonant chain by migration.

Provenance of the test file (run once; the file is committed): three 5-Earth-mass planets around a
0.5 M_sun star start wide of the 3:2 commensurabilities; the outer planet migrates inwards on a time
scale tau_a and every planet's eccentricity is damped on tau_e = tau_a / 100 (the standard convergent-
migration set-up of resonant-chain formation, e.g. Terquem & Papaloizou 2007 -- from memory); the forces
are the usual velocity-damping forms (Papaloizou & Larwood 2000 -- from memory).  After capture the forces
are turned off and the system relaxes; the osculating Jacobi elements at the end are written with small
errors.  Plain rebound (IAS15), independent of archsys.
"""
import math
import sys

import numpy as np
import rebound

G = 2.959122082855911e-4          # au^3 / (M_sun day^2), IAU 2015 nominal GM_sun
M_STAR = 0.5
M_P = 5.0 * 3.0034896e-6          # 5 Earth masses in M_sun
P0 = np.array([10.0, 15.6, 24.6])  # days: wide of 3:2 and 3:2
TAU_A = 2.0e4 * P0[0]             # outer planet migration time scale
TAU_E = TAU_A / 100.0


def build():
    sim = rebound.Simulation()
    sim.G = G
    sim.add(m=M_STAR)
    rng = np.random.default_rng(4)
    for P in P0:
        sim.add(m=M_P, P=P, e=0.001, M=rng.uniform(0, 2 * math.pi))
    sim.move_to_com()
    sim.integrator = "whfast"
    sim.dt = P0[0] / 25.0
    ps = sim.particles

    on = [True]

    def forces(reb_sim):
        if not on[0]:
            return
        star = ps[0]
        for i in range(1, 4):
            p = ps[i]
            dvx, dvy, dvz = p.vx - star.vx, p.vy - star.vy, p.vz - star.vz
            dx, dy, dz = p.x - star.x, p.y - star.y, p.z - star.z
            r2 = dx * dx + dy * dy + dz * dz
            rdotv = dx * dvx + dy * dvy + dz * dvz
            ax = ay = az = 0.0
            if i == 3:                                     # migration: -v / (2 tau_a)
                ax -= dvx / (2 * TAU_A); ay -= dvy / (2 * TAU_A); az -= dvz / (2 * TAU_A)
            k = -2.0 * rdotv / (r2 * TAU_E)                # eccentricity damping: -2 (v.r) r / (r^2 tau_e)
            ax += k * dx; ay += k * dy; az += k * dz
            p.ax += ax; p.ay += ay; p.az += az

    sim.additional_forces = forces
    sim.force_is_velocity_dependent = 1
    t_mig = 1.5 * TAU_A
    sim.integrate(t_mig, exact_finish_time=0)
    on[0] = False
    sim.integrate(sim.t + 2000 * P0[0], exact_finish_time=0)
    return sim


def main(out):
    sim = build()
    o = sim.orbits()
    P = [x.P for x in o]
    print("period ratios", P[1] / P[0], P[2] / P[1], "e", [x.e for x in o], file=sys.stderr)
    epoch = 2460000.0
    lines = ['# Three-planet resonant chain built by migration (tests/data/dynamics/make_resonant_chain.py):',
             '# invented test system, not a real one.  Osculating Jacobi elements at the epoch.',
             'name = "Chain3"', f"epoch = {epoch}", "", "[star]", f"mass = {M_STAR}", ""]
    for k, x in enumerate(o):
        lam = math.degrees(x.l) % 360.0
        pom = math.degrees(x.pomega) % 360.0
        lines += ["[[planet]]", f'name = "Chain3 {"bcd"[k]}"',
                  f"period = {{ value = {x.P:.6f}, err = 0.0005 }}",
                  f"mass = {{ value = {M_P / 3.0034896e-6:.4f}, err = 0.05 }}",
                  f"ecc = {{ value = {x.e:.5f}, err = 0.0005 }}",
                  f"omega = {{ value = {pom:.3f}, err = 0.5 }}",
                  f"mean_longitude = {{ value = {lam:.3f}, err = 0.2 }}", ""]
    open(out, "w").write("\n".join(lines))


if __name__ == "__main__":
    main(sys.argv[1] if len(sys.argv) > 1 else "chain3_resonant.toml")
