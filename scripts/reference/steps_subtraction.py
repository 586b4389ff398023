#!/usr/bin/python3
"""Reference values for heralded photon subtraction (tap + photon counter) on two-mode Gaussian
states in standard form V = [[a I, c Z], [c Z, b I]] (shot-noise units).

Success probabilities, two ways, mpmath at 30 digits:
 * closed form from the photon-number generating function of the standard form
       G(y, z) = <y^nA z^nB> = 4 / (D [(1 - sA y)(1 - sB z) - t^2 y z]),
       D = (a+1)(b+1) - c^2, sA = [(a-1)(b+1) - c^2]/D, sB = [(a+1)(b-1) - c^2]/D, t = 2c/D
   (follows from the Husimi function of the Gaussian state), with the tap identity
       sum_k u^k M_k^dagger M_k = (T + u (1-T))^n,   M_k the pure-loss Kraus operators,
   so that for the on/off counter model of Kitagawa, Takeoka, Sasaki & Chefles, PRA 73, 042310
   (2006), y = 1 - eta (1 - T):
       one-sided:  P = 1 - (1-p) G(y, 1)
       two-sided:  P = 1 - (1-p)[G(y,1) + G(1,y)] + (1-p)^2 G(y,y)
   and for a resolving counter heralding exactly one count (Poissonian dark counts nu):
       sum_k P(1|k) M_k^dagger M_k = e^{-nu} [eta (1-T) n y^{n-1} + nu y^n], hence
       two-sided:  P = e^{-2 nu} [eta^2 (1-T)^2 G_yz + eta nu (1-T)(G_y + G_z) + nu^2 G] at (y, y);
 * a direct sum over the photon-number distribution of the state (Fock-space diagonal),
   P = sum_{m,n} p(m,n) h_A(m) h_B(n), h(m) = sum_k w(k) C(m,k) T^{m-k} (1-T)^k.
Negativity, log-negativity (Vidal & Werner, PRA 65, 032314 (2002)) and the Braunstein-Kimble
fidelity (unit gain, coherent inputs, F = Tr[rho O], O = exp[-(a^dagger - b)(a - b^dagger)],
the EPR operator; Braunstein & Kimble, PRL 80, 869 (1998)) of the heralded, normalised state, in
numpy double precision: the full dense partial transpose is diagonalised (no block structure),
and O is the matrix exponential of the truncated K^dagger K in a larger space (cutoff 2d + 30).
Writes tests/reference/steps_subtraction.csv.
Run: /usr/bin/python3 scripts/reference/steps_subtraction.py
"""
import math
import os

import mpmath as mp
import numpy as np

mp.mp.dps = 30


# ----------------------------------------------------------------- inputs (standard form)
def tmst(r, nth):
    k = 2 * mp.mpf(nth) + 1
    return [k * mp.cosh(2 * mp.mpf(r)), k * mp.cosh(2 * mp.mpf(r)), k * mp.sinh(2 * mp.mpf(r))]


def loss_b(form, tau, ne):
    a, b, c = form
    tau, ne = mp.mpf(tau), mp.mpf(ne)
    return [a, tau * b + (1 - tau) * (2 * ne + 1), mp.sqrt(tau) * c]


def husimi_params(form):
    a, b, c = form
    d = (a + 1) * (b + 1) - c * c
    return d, ((a - 1) * (b + 1) - c * c) / d, ((a + 1) * (b - 1) - c * c) / d, 2 * c / d


# ----------------------------------------------------------------- closed forms
def gen(form, y, z):
    d, sa, sb, t = husimi_params(form)
    return 4 / (d * ((1 - sa * y) * (1 - sb * z) - t * t * y * z))


def gen_derivs(form, y, z):
    d, sa, sb, t = husimi_params(form)
    q = (1 - sa * y) * (1 - sb * z) - t * t * y * z
    qy = -sa * (1 - sb * z) - t * t * z
    qz = -sb * (1 - sa * y) - t * t * y
    qyz = sa * sb - t * t
    g = 4 / (d * q)
    gy = -4 * qy / (d * q * q)
    gz = -4 * qz / (d * q * q)
    gyz = 4 * (2 * qy * qz / q ** 3 - qyz / q ** 2) / d
    return g, gy, gz, gyz


def p_closed(form, case):
    kind, sides, T, eta, dark = case['kind'], case['sides'], mp.mpf(case['T']), mp.mpf(case['eta']), mp.mpf(case['dark'])
    y = 1 - eta * (1 - T)
    if kind == 'threshold':
        q = 1 - dark
        if sides == 'one':
            return 1 - q * gen(form, y, 1)
        return 1 - q * (gen(form, y, 1) + gen(form, 1, y)) + q * q * gen(form, y, y)
    g, gy, gz, gyz = gen_derivs(form, y, y)
    if sides == 'one':
        g1, gy1, _, _ = gen_derivs(form, y, 1)
        return mp.exp(-dark) * (eta * (1 - T) * gy1 + dark * g1)
    return mp.exp(-2 * dark) * (eta ** 2 * (1 - T) ** 2 * gyz + eta * dark * (1 - T) * (gy + gz) + dark ** 2 * g)


# ----------------------------------------------------------------- Fock-space diagonal sum
def weight(case, k):
    eta, dark = mp.mpf(case['eta']), mp.mpf(case['dark'])
    if case['kind'] == 'threshold':
        return 1 - (1 - dark) * (1 - eta) ** k
    # exactly one count
    e = mp.exp(-dark)
    return e * (k * eta * (1 - eta) ** (k - 1) + dark * (1 - eta) ** k) if k > 0 else e * dark


_DIAGONALS = {}


def photon_distribution(form, d):
    """p(m, n) = <m, n|rho|m, n> from the Husimi-function expansion (delta = 0 terms)."""
    key = (tuple(form), d)
    if key not in _DIAGONALS:
        D4, sa, sb, t = husimi_params(form)
        fact = [mp.factorial(i) for i in range(d)]
        p = [[mp.mpf(0)] * d for _ in range(d)]
        for m in range(d):
            for n in range(d):
                s = mp.mpf(0)
                for j in range(min(m, n) + 1):
                    s += t ** (2 * j) * sa ** (m - j) * sb ** (n - j) / (fact[j] ** 2 * fact[m - j] * fact[n - j])
                p[m][n] = (4 / D4) * fact[m] * fact[n] * s
        _DIAGONALS[key] = p
    return _DIAGONALS[key]


def p_fock(form, case, d=90):
    T = mp.mpf(case['T'])
    w = [weight(case, k) for k in range(d)]
    h = [sum(w[k] * mp.binomial(m, k) * T ** (m - k) * (1 - T) ** k for k in range(m + 1)) for m in range(d)]
    ha = h
    hb = h if case['sides'] == 'two' else [mp.mpf(1)] * d
    p = photon_distribution(form, d)
    return sum(p[m][n] * ha[m] * hb[n] for m in range(d) for n in range(d))


# ----------------------------------------------------------------- dense state, double precision
def dense_state(form, d):
    """rho[mA, mB, nA, nB] from the Husimi-function expansion of the standard form."""
    D4, sa, sb, t = [float(x) for x in husimi_params(form)]
    lf = [math.lgamma(i + 1) for i in range(2 * d + 2)]
    rho = np.zeros((d, d, d, d))
    ls = lambda x: math.log(x) if x > 0 else -math.inf
    lsa, lsb, lt = ls(sa), ls(sb), ls(t)
    for ma in range(d):
        for mb in range(d):
            for na in range(d):
                nb = na - (ma - mb)
                if nb < 0 or nb >= d:
                    continue
                delta = ma - na
                s = 0.0
                for j in range(max(0, delta), min(ma, mb) + 1):
                    e = 0.0
                    pw = [(2 * j - delta, lt), (ma - j, lsa), (mb - j, lsb)]
                    ok = True
                    for p, lg in pw:
                        if p > 0:
                            if lg == -math.inf:
                                ok = False
                            e += p * lg
                    if not ok:
                        continue
                    e += 0.5 * (lf[ma] + lf[mb] + lf[na] + lf[nb]) - lf[j] - lf[j - delta] - lf[ma - j] - lf[mb - j]
                    s += math.exp(e)
                rho[ma, mb, na, nb] = 4.0 / D4 * s
    return rho


def tap_matrices(T, d):
    mats = []
    for k in range(d):
        a = np.zeros((d, d))
        for n in range(k, d):
            a[n - k, n] = math.sqrt(math.comb(n, k) * T ** (n - k) * (1 - T) ** k)
        mats.append(a)
    return mats


def apply_tap(rho, mode, case, d):
    mats = tap_matrices(float(case['T']), d)
    out = np.zeros_like(rho)
    for k, a in enumerate(mats):
        w = float(weight(case, k))
        if mode == 0:
            out += w * np.einsum('ia,abcd,jc->ibjd', a, rho, a, optimize=True)
        else:
            out += w * np.einsum('ib,abcd,jd->aicj', a, rho, a, optimize=True)
    return out


def epr_operator(d, big):
    """O = exp(-K^dagger K), K = a - b^dagger, K^dagger K = nA + nB + 1 - a b - a^dagger b^dagger,
    block diagonal in nA - nB; truncated at nA, nB < big, then cut to d."""
    o = np.zeros((d, d, d, d))
    for delta in range(-(big - 1), big):
        idx = [i for i in range(big) if 0 <= i - delta < big]
        m = len(idx)
        h = np.zeros((m, m))
        for p, i in enumerate(idx):
            h[p, p] = 2 * i - delta + 1
            if p + 1 < m:
                v = -math.sqrt((i + 1) * (i + 1 - delta))
                h[p, p + 1] = h[p + 1, p] = v
        ev, vec = np.linalg.eigh(h)
        e = (vec * np.exp(-ev)) @ vec.T
        for p, i in enumerate(idx):
            for q, j in enumerate(idx):
                if i < d and j < d and i - delta < d and j - delta < d:
                    o[i, i - delta, j, j - delta] = e[p, q]
    return o


def measures(rho, o):
    d = rho.shape[0]
    tr = np.einsum('abab->', rho)
    pt = rho.transpose(0, 3, 2, 1).reshape(d * d, d * d)
    ev = np.linalg.eigvalsh(pt)
    norm1 = np.sum(np.abs(ev)) / tr
    f = np.sum(rho * o) / tr
    return math.log2(norm1), (norm1 - 1) / 2, f


CASES = [
    # name, input, sides, kind, T, eta, dark
    ('tmsv_threshold_two_ideal', 'tmsv', 'two', 'threshold', '0.9', '1', '0'),
    ('tmsv_threshold_one_ideal', 'tmsv', 'one', 'threshold', '0.9', '1', '0'),
    ('tmsv_threshold_two_real', 'tmsv', 'two', 'threshold', '0.9', '0.6', '1e-3'),
    ('tmsv_threshold_one_real', 'tmsv', 'one', 'threshold', '0.9', '0.6', '1e-3'),
    ('tmsv_threshold_two_noisy', 'tmsv', 'two', 'threshold', '0.95', '0.8', '0.01'),
    ('tmsv_threshold_one_noisy', 'tmsv', 'one', 'threshold', '0.95', '0.8', '0.01'),
    ('tmsv_resolving_two_ideal_090', 'tmsv', 'two', 'resolving', '0.9', '1', '0'),
    ('tmsv_resolving_two_ideal_095', 'tmsv', 'two', 'resolving', '0.95', '1', '0'),
    ('tmsv_resolving_two_real', 'tmsv', 'two', 'resolving', '0.9', '0.7', '0.01'),
    ('tmsv_resolving_one_real', 'tmsv', 'one', 'resolving', '0.9', '0.7', '0.01'),
    ('mixed_threshold_two_real', 'mixed', 'two', 'threshold', '0.9', '0.7', '0.002'),
]

INPUTS = {
    # TMSV r = 0.5; mixed: TMST r = 0.6, n_th = 0.03, then thermal loss tau = 0.85, n_E = 0.2 on B
    'tmsv': dict(r='0.5', nth='0', tau='1', ne='0'),
    'mixed': dict(r='0.6', nth='0.03', tau='0.85', ne='0.2'),
}


def main():
    d = 40
    o = epr_operator(d, 2 * d + 30)
    o2 = epr_operator(d, 2 * d + 50)
    print('EPR operator truncation check:', np.max(np.abs(o - o2)), ' O_00,00 =', o[0, 0, 0, 0])
    states = {}
    for key, p in INPUTS.items():
        form = loss_b(tmst(p['r'], p['nth']), p['tau'], p['ne'])
        states[key] = (form, dense_state(form, d))
    path = os.path.join(os.path.dirname(__file__), '..', '..', 'tests', 'reference', 'steps_subtraction.csv')
    with open(path, 'w') as f:
        f.write('# Heralded photon subtraction (beam-splitter tap of transmissivity T + counter) on standard-form\n')
        f.write('# Gaussian inputs. P_closed: generating function G(y,z) = 4/(D[(1-sA y)(1-sB z) - t^2 y z]) with\n')
        f.write('# sum_k u^k M_k^dag M_k = (T + u(1-T))^n; on/off counter model of Kitagawa, Takeoka, Sasaki & Chefles,\n')
        f.write('# PRA 73, 042310 (2006): one-sided 1-(1-p)G(y,1), two-sided 1-(1-p)[G(y,1)+G(1,y)]+(1-p)^2 G(y,y),\n')
        f.write('# y = 1 - eta(1-T); resolving (exactly one count each): derivatives of G. P_fock: direct sum over the\n')
        f.write('# photon-number distribution (cutoff 90). Both mpmath 30 digits. E_N, N (Vidal & Werner, PRA 65, 032314\n')
        f.write('# (2002)) and F = Tr[rho exp(-(a^dag-b)(a-b^dag))] (Braunstein-Kimble unit-gain fidelity) of the\n')
        f.write('# normalised heralded state: numpy, dense partial transpose, cutoff 40 per mode.\n')
        f.write('# Input tmsv: r = 0.5; mixed: TMST r = 0.6, n_th = 0.03, thermal loss tau = 0.85, n_E = 0.2 on B.\n')
        f.write('# sides = one: tap on mode A only. Generated by scripts/reference/steps_subtraction.py.\n')
        f.write('case,r,thermal_photons,loss_tau_b,loss_bath_b,sides,kind,T,eta,dark,P_closed,P_fock,log_negativity,negativity,fidelity\n')
        for name, inp, sides, kind, T, eta, dark in CASES:
            case = dict(sides=sides, kind=kind, T=T, eta=eta, dark=dark)
            form, rho = states[inp]
            pc = p_closed(form, case)
            pf = p_fock(form, case)
            out = apply_tap(rho, 0, case, d)
            if sides == 'two':
                out = apply_tap(out, 1, case, d)
            en, neg, fid = measures(out, o)
            ptr = np.einsum('abab->', out)
            p = INPUTS[inp]
            f.write(','.join([name, p['r'], p['nth'], p['tau'], p['ne'], sides, kind, T, eta, dark,
                              mp.nstr(pc, 20), mp.nstr(pf, 20), '%.12f' % en, '%.12f' % neg, '%.12f' % fid]) + '\n')
            print('%-30s P %s (fock %s, rel %.1e; dense %.12g)  E_N %.8f  N %.8f  F %.8f' % (
                name, mp.nstr(pc, 12), mp.nstr(pf, 12), float(abs(pc - pf) / pc), ptr, en, neg, fid))


if __name__ == '__main__':
    main()
