#!/usr/bin/env python3
"""Generate reference values for the closed-form transmission-line models of
stackup-physics from scikit-rf (a general-purpose RF library on PyPI).

This script installs nothing. Run it in a virtual environment that has
scikit-rf, e.g.

    python3 -m venv /tmp/skrf-venv
    /tmp/skrf-venv/bin/pip install scikit-rf
    /tmp/skrf-venv/bin/python gen_tline_reference.py > tline_reference.tsv

Rows:
  mline  : skrf.media.MLine, model='hammerstadjensen' (Hammerstad-Jensen 1980
           with thickness), disp='kirschningjansen' (Kirschning-Jansen 1982
           eps_eff(f), Jansen-Kirschning 1983 Z0(f)), frequency-invariant
           lossless dielectric. Static columns come from MLine.zl_eff /
           MLine.ep_reff, dispersive ones from MLine.Z0_f / MLine.ep_reff_f.
  gcpw   : skrf.media.CPW with has_metal_backside=True (conformal mapping,
           Ghione-Naldi 1983 / Gupta et al. 1996, thickness correction of
           Gupta et al. eqs. 7.98-7.100). Static columns only.
  gcpwdisp: the same media with its default dispersion (Frankel et al.
           1991 / Gevorgian et al. 1997 eps_eff(f)), lossless and
           frequency-invariant dielectric, at 1 to 110 GHz: static columns
           from CPW.zl_eff / CPW.ep_reff, dispersive eps_eff from
           CPW.ep_reff_f (z0_f repeats the static impedance: the crate does
           not take scikit-rf's Z(f) for coplanar lines).
All lengths in metres, frequency in hertz, impedance in ohm.
"""
import platform
import sys
import warnings

import numpy as np
import skrf
from skrf.media import CPW, MLine


def mline_rows():
    cases = []
    # (w, h, t, eps_r) inside the Hammerstad-Jensen / Kirschning-Jansen ranges
    for h in (0.1e-3, 0.2e-3, 1.27e-3):
        for u in (0.2, 0.5, 1.0, 2.0, 3.0812, 5.0, 9.0):
            for t_over_h in (0.0, 0.05, 0.17):
                for er in (2.2, 3.5, 4.4, 10.2):
                    cases.append((u * h, h, t_over_h * h, er))
    rows = []
    for (w, h, t, er) in cases:
        # Frequencies up to h/lambda0 = 0.08 (inside both dispersion ranges).
        fmax = 0.08 * 299792458.0 / h
        freqs = np.array([1e9, 10e9, 0.5 * fmax, fmax])
        freqs = np.unique(np.clip(freqs, 1e9, fmax))
        fr = skrf.Frequency.from_f(freqs, unit="Hz")
        m = MLine(
            frequency=fr,
            w=w,
            h=h,
            t=t,
            ep_r=er,
            tand=0.0,
            rho=1.68e-8,  # only enters the loss terms, not Z0 / eps_eff
            rough=0.0,
            model="hammerstadjensen",
            disp="kirschningjansen",
            diel="frequencyinvariant",
        )
        z_static = float(np.real(np.atleast_1d(m.zl_eff)[0]))
        e_static = float(np.real(np.atleast_1d(m.ep_reff)[0]))
        with warnings.catch_warnings():
            # Z0_f is the lossless dispersive impedance (the loss-free
            # characteristic impedance of the Jansen-Kirschning model).
            warnings.simplefilter("ignore", DeprecationWarning)
            zf = np.real(np.atleast_1d(m.Z0_f))
        ef = np.real(np.atleast_1d(m.ep_reff_f))
        for i, f in enumerate(freqs):
            rows.append(("mline", w, 0.0, h, t, er, f, z_static, e_static, zf[i], ef[i]))
    return rows


def gcpw_media(fr, w, s, h, t, er):
    """Conductor-backed CPW, lossless, frequency-invariant dielectric."""
    return CPW(
        frequency=fr,
        w=w,
        s=s,
        h=h,
        t=(t if t > 0 else None),
        ep_r=er,
        tand=0.0,
        rho=1.68e-8,
        has_metal_backside=True,
        diel="frequencyinvariant",
    )


def gcpw_rows():
    rows = []
    fr = skrf.Frequency.from_f(np.array([1e9]), unit="Hz")
    for h in (0.1e-3, 0.127e-3, 0.5e-3):
        for w in (0.1e-3, 0.3e-3, 0.6e-3):
            for s in (0.1e-3, 0.15e-3, 0.3e-3):
                for t in (0.0, 9e-6, 18e-6):
                    for er in (3.0, 4.4, 10.2):
                        c = gcpw_media(fr, w, s, h, t, er)
                        z = float(np.real(np.atleast_1d(c.zl_eff)[0]))
                        e = float(np.real(np.atleast_1d(c.ep_reff)[0]))
                        rows.append(("gcpw", w, s, h, t, er, 0.0, z, e, z, e))
    return rows


def gcpw_disp_rows():
    rows = []
    freqs = np.array([1e9, 10e9, 40e9, 77e9, 110e9])
    fr = skrf.Frequency.from_f(freqs, unit="Hz")
    for h in (0.1e-3, 0.2e-3, 0.5e-3):
        for w in (0.1e-3, 0.3e-3, 0.6e-3):
            for s in (0.1e-3, 0.3e-3):
                for t in (0.0, 18e-6):
                    for er in (3.0, 4.4, 10.2):
                        c = gcpw_media(fr, w, s, h, t, er)
                        z = float(np.real(np.atleast_1d(c.zl_eff)[0]))
                        e = float(np.real(np.atleast_1d(c.ep_reff)[0]))
                        ef = np.real(np.atleast_1d(c.ep_reff_f))
                        for i, f in enumerate(freqs):
                            rows.append(("gcpwdisp", w, s, h, t, er, f, z, e, z, ef[i]))
    return rows


def main():
    # scikit-rf warns about its conductor-loss model for thin strips; losses
    # are not part of this table.
    warnings.simplefilter("ignore", RuntimeWarning)
    out = sys.stdout
    out.write(
        "# reference library: scikit-rf %s (numpy %s, Python %s); generated by gen_tline_reference.py\n"
        % (skrf.__version__, np.__version__, platform.python_version())
    )
    out.write("kind\tw\ts\th\tt\teps_r\tf\tz0_static\teps_eff_static\tz0_f\teps_eff_f\n")
    for r in mline_rows() + gcpw_rows() + gcpw_disp_rows():
        out.write(
            "%s\t%.9e\t%.9e\t%.9e\t%.9e\t%.6g\t%.9e\t%.10g\t%.10g\t%.10g\t%.10g\n" % r
        )


if __name__ == "__main__":
    main()
