#!/usr/bin/python3
"""Reference values for the quantum-scissors step: a brute-force simulation of the optical
network in a truncated three-mode Fock space (input a, ancilla c, vacuum port v), with the
beam-splitter unitaries built as matrix exponentials of their generators (mpmath, 30 digits),
followed by photon-counter POVMs on the two detector modes.

Network (Pegg, Phillips & Barnett, PRL 81, 1604 (1998); amplifier version: Ralph & Lund,
AIP Conf. Proc. 1110, 155 (2009)):
  c^dagger -> sqrt(kappa) o^dagger + sqrt(1-kappa) e^dagger      (kappa = g^2/(1+g^2))
  a^dagger -> (d1^dagger + d2^dagger)/sqrt(2),  e^dagger -> (d1^dagger - d2^dagger)/sqrt(2)
The unitaries are exp[theta (x^dagger y - x y^dagger)] (times a photon-number parity where the
target transformation needs one); the angle and parity are chosen by checking their action on
one photon, the many-photon amplitudes come from the matrix exponential.
Herald: exactly one counter fires; the (0,1) herald gets |1> -> -|1> on the output before the
two outcomes are added (unless the row says corrected = 0).
Counter models (Kitagawa, Takeoka, Sasaki & Chefles, PRA 73, 042310 (2006), on/off model):
  threshold: P(click|k) = 1 - (1-p)(1-eta)^k,  P(no click|k) = (1-p)(1-eta)^k
  resolving: P(1|k) = e^{-nu}[k eta (1-eta)^{k-1} + nu (1-eta)^k],  P(0|k) = e^{-nu}(1-eta)^k

Writes tests/reference/steps_scissors.csv: the unnormalised heralded output (rho00, rho01,
rho11) and P = rho00 + rho11 for pure inputs sum_n c_n |n>.
Run: /usr/bin/python3 scripts/reference/steps_scissors.py
"""
import os
import mpmath as mp

mp.mp.dps = 30
NMAX = 4            # input photon numbers 0..NMAX
D = NMAX + 2        # per-mode dimension: at most NMAX + 1 photons in the network


def two_mode_generator():
    """x^dagger y - x y^dagger on the D x D two-mode space, index x*D + y."""
    g = mp.zeros(D * D, D * D)
    for nx in range(D):
        for ny in range(D):
            col = nx * D + ny
            # x^dagger y |nx, ny> = sqrt(nx+1) sqrt(ny) |nx+1, ny-1>
            if ny > 0 and nx + 1 < D:
                g[(nx + 1) * D + ny - 1, col] += mp.sqrt(nx + 1) * mp.sqrt(ny)
            if nx > 0 and ny + 1 < D:
                g[(nx - 1) * D + ny + 1, col] -= mp.sqrt(nx) * mp.sqrt(ny + 1)
    return g


GEN = two_mode_generator()


def parity(second):
    p = mp.zeros(D * D, D * D)
    for nx in range(D):
        for ny in range(D):
            i = nx * D + ny
            p[i, i] = (-1) ** (ny if second else nx)
    return p


def beam_splitter(target_x, target_y):
    """Unitary with x^dagger -> target_x[0] x^dagger + target_x[1] y^dagger and
    y^dagger -> target_y[0] x^dagger + target_y[1] y^dagger (checked on one photon)."""
    cos_t = target_x[0]
    theta0 = mp.acos(cos_t)
    for theta in (theta0, -theta0):
        u = mp.expm(theta * GEN)
        for par in (None, 'x', 'y'):
            w = u if par is None else parity(par == 'y') * u
            ok = True
            for src, tgt in ((1 * D + 0, target_x), (0 * D + 1, target_y)):
                if abs(w[1 * D + 0, src] - tgt[0]) > 1e-25 or abs(w[0 * D + 1, src] - tgt[1]) > 1e-25:
                    ok = False
            if ok:
                return w
    raise RuntimeError("no beam splitter matches the target transformation")


def weights(kind, eta, dark, fire, k):
    eta, dark = mp.mpf(eta), mp.mpf(dark)
    if kind == 'threshold':
        silent = (1 - dark) * (1 - eta) ** k
        return 1 - silent if fire else silent
    e = mp.exp(-dark)
    if fire:
        return e * (k * eta * (1 - eta) ** (k - 1) + dark * (1 - eta) ** k) if k > 0 else e * dark
    return e * (1 - eta) ** k


def scissors(coeffs, g, ps, kind, eta, dark, corrected=True):
    g = mp.mpf(g)
    kappa = g * g / (1 + g * g)
    bs1 = beam_splitter((mp.sqrt(kappa), mp.sqrt(1 - kappa)), (mp.sqrt(1 - kappa), -mp.sqrt(kappa)))
    h = 1 / mp.sqrt(2)
    bs2 = beam_splitter((h, h), (h, -h))
    rho = mp.zeros(2, 2)
    for ancilla, prob in ((1, mp.mpf(ps)), (0, 1 - mp.mpf(ps))):
        if prob == 0:
            continue
        # psi[a][c][v]
        psi = {}
        for n, cn in enumerate(coeffs):
            psi[(n, ancilla, 0)] = mp.mpf(cn)
        # BS1 on (c, v)
        out = {}
        for (na, nc, nv), amp in psi.items():
            col = nc * D + nv
            for row in range(D * D):
                u = bs1[row, col]
                if u != 0:
                    key = (na, row // D, row % D)
                    out[key] = out.get(key, 0) + u * amp
        # BS2 on (a, e=v): a -> d1, e -> d2; c is now the output o
        fin = {}
        for (na, no, ne), amp in out.items():
            col = na * D + ne
            for row in range(D * D):
                u = bs2[row, col]
                if u != 0:
                    key = (row // D, no, row % D)
                    fin[key] = fin.get(key, 0) + u * amp
        for outcome in (0, 1):
            for k1 in range(D):
                for k2 in range(D):
                    w = (weights(kind, eta, dark, outcome == 0, k1) *
                         weights(kind, eta, dark, outcome == 1, k2))
                    v = [fin.get((k1, m, k2), mp.mpf(0)) for m in (0, 1)]
                    if outcome == 1 and corrected:
                        v[1] = -v[1]
                    for i in range(2):
                        for j in range(2):
                            rho[i, j] += prob * w * v[i] * v[j]
    return rho


def main():
    base = [mp.mpf(x) for x in ('0.6', '0.5', '0.4', '0.3', '0.2')]
    norm = mp.sqrt(sum(x * x for x in base))
    base = [x / norm for x in base]
    alpha = mp.mpf('0.3')
    coherent = [mp.exp(-alpha ** 2 / 2) * alpha ** n / mp.sqrt(mp.factorial(n)) for n in range(NMAX + 1)]
    cn = mp.sqrt(sum(x * x for x in coherent))
    coherent = [x / cn for x in coherent]   # renormalised truncated coherent state
    cases = [
        ('ideal_kappa_0.5', base, 1, 1, 'resolving', 1, 0, 1),
        ('ideal_kappa_0.8', base, 2, 1, 'resolving', 1, 0, 1),
        ('threshold_lossy_source', base, 1.5, 0.9, 'threshold', 0.7, 0.01, 1),
        ('resolving_lossy_source', base, 0.8, 0.95, 'resolving', 0.8, 0.02, 1),
        ('ideal_threshold', base, 1.5, 1, 'threshold', 1, 0, 1),
        ('coherent_ideal', coherent, 1.5, 1, 'resolving', 1, 0, 1),
        ('coherent_threshold', coherent, 1.5, 0.9, 'threshold', 0.6, 0.001, 1),
        ('uncorrected_threshold', base, 1.5, 0.9, 'threshold', 0.7, 0.01, 0),
    ]
    path = os.path.join(os.path.dirname(__file__), '..', '..', 'tests', 'reference', 'steps_scissors.csv')
    with open(path, 'w') as f:
        f.write('# Quantum scissors with real counters: brute-force three-mode Fock simulation\n')
        f.write('# (beam-splitter unitaries = matrix exponentials, mpmath 30 digits) of the network of\n')
        f.write('# Pegg, Phillips & Barnett, PRL 81, 1604 (1998) / Ralph & Lund, AIP Conf. Proc. 1110, 155 (2009);\n')
        f.write('# counters: on/off model of Kitagawa et al., PRA 73, 042310 (2006) and its Poissonian resolving analogue.\n')
        f.write('# Generated by scripts/reference/steps_scissors.py. Output unnormalised; P = rho00 + rho11.\n')
        f.write('case,gain,source_efficiency,kind,efficiency,dark,corrected,c0,c1,c2,c3,c4,P,rho00,rho01,rho11\n')
        for name, c, g, ps, kind, eta, dark, corr in cases:
            rho = scissors(c, g, ps, kind, eta, dark, bool(corr))
            vals = [name, g, ps, kind, eta, dark, corr] + [mp.nstr(x, 20) for x in c]
            vals += [mp.nstr(rho[0, 0] + rho[1, 1], 20), mp.nstr(rho[0, 0], 20), mp.nstr(rho[0, 1], 20),
                     mp.nstr(rho[1, 1], 20)]
            f.write(','.join(str(v) for v in vals) + '\n')
            print(name, mp.nstr(rho[0, 0] + rho[1, 1], 12))


if __name__ == '__main__':
    main()
