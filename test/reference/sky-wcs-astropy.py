# Reference values for core/sky/wcs.ts from astropy.wcs (Debian python3-astropy, which wraps
# WCSLIB): pixel -> world for TAN, TAN-SIP and TPV headers, and world -> pixel back.
# Prints JSON: a list of cases {header, pix (0-based), world (deg)}.
import json, sys, warnings
import numpy as np
from astropy.io import fits
from astropy.wcs import WCS, FITSFixedWarning

warnings.simplefilter('ignore', FITSFixedWarning)
rng = np.random.default_rng(20240601)

def case(cards, W, H, n=25):
    h = fits.Header()
    for k, v in cards.items():
        h[k] = v
    w = WCS(h)
    x = rng.uniform(0, W - 1, n)
    y = rng.uniform(0, H - 1, n)
    # astropy's origin=0 is this project's convention (0-based)
    world = w.all_pix2world(np.c_[x, y], 0)
    return {'header': cards, 'width': W, 'height': H, 'pix': np.c_[x, y].tolist(), 'world': world.tolist()}

cases = []
# plain TAN, CD matrix, mirrored and rotated, near the pole and across RA 0
cases.append(case({'CTYPE1': 'RA---TAN', 'CTYPE2': 'DEC--TAN', 'CRPIX1': 512.5, 'CRPIX2': 384.5, 'CRVAL1': 355.2, 'CRVAL2': 58.15,
                   'CD1_1': -0.0066941, 'CD1_2': 0.0089898, 'CD2_1': -0.0089834, 'CD2_2': -0.0066970}, 1024, 768))
cases.append(case({'CTYPE1': 'RA---TAN', 'CTYPE2': 'DEC--TAN', 'CRPIX1': 2000.0, 'CRPIX2': 1500.0, 'CRVAL1': 0.3, 'CRVAL2': 87.5,
                   'CDELT1': -0.01, 'CDELT2': 0.01, 'PC1_1': 0.8, 'PC1_2': -0.6, 'PC2_1': 0.6, 'PC2_2': 0.8}, 4000, 3000))
cases.append(case({'CTYPE1': 'RA---TAN', 'CTYPE2': 'DEC--TAN', 'CRPIX1': 100.0, 'CRPIX2': 80.0, 'CRVAL1': 120.0, 'CRVAL2': -45.0,
                   'CDELT1': 0.02, 'CDELT2': 0.02, 'CROTA2': 30.0}, 300, 200))
# TAN-SIP of order 3 with radial-like terms (barrel), and the solver-written header of openstartracker
sip = {'CTYPE1': 'RA---TAN-SIP', 'CTYPE2': 'DEC--TAN-SIP', 'CRPIX1': 3000.5, 'CRPIX2': 2000.5, 'CRVAL1': 83.8, 'CRVAL2': -5.4,
       'CD1_1': -0.0033, 'CD1_2': 0.0, 'CD2_1': 0.0, 'CD2_2': 0.0033, 'A_ORDER': 3, 'B_ORDER': 3}
k = -2.0e-9  # u * k * r^2
sip.update({'A_3_0': k, 'A_1_2': k, 'B_2_1': k, 'B_0_3': k, 'A_2_0': 1.5e-7, 'B_1_1': -2e-7, 'A_0_2': 3e-8})
cases.append(case(sip, 6000, 4000))
osth = fits.getheader(sys.argv[1]) if len(sys.argv) > 1 else None
if osth is not None:
    keys = [k for k in osth.keys() if k and (k.startswith(('CTYPE', 'CRPIX', 'CRVAL', 'CD1_', 'CD2_', 'A_', 'B_', 'AP_', 'BP_')) or k in ('LONPOLE', 'LATPOLE'))]
    cases.append(case({k: osth[k] for k in keys}, osth['NAXIS1'], osth['NAXIS2']))
# TPV (SCAMP-style) with linear, quadratic, cubic and r terms
tpv = {'CTYPE1': 'RA---TPV', 'CTYPE2': 'DEC--TPV', 'CRPIX1': 1024.0, 'CRPIX2': 1024.0, 'CRVAL1': 210.0, 'CRVAL2': 30.0,
       'CD1_1': -1.5e-4, 'CD1_2': 1e-6, 'CD2_1': -1e-6, 'CD2_2': 1.5e-4,
       'PV1_0': 1e-5, 'PV1_1': 1.0001, 'PV1_2': 2e-4, 'PV1_4': 1e-3, 'PV1_5': -2e-3, 'PV1_6': 5e-4, 'PV1_7': 0.02, 'PV1_9': 0.02, 'PV1_11': 0.0,
       'PV2_0': -2e-5, 'PV2_1': 0.9999, 'PV2_2': -1e-4, 'PV2_4': 7e-4, 'PV2_5': 1e-3, 'PV2_6': -3e-4, 'PV2_7': 0.02, 'PV2_9': 0.02,
       'PV1_17': 0.5, 'PV2_19': -0.3, 'PV1_24': 2.0, 'PV2_31': 1.0}
cases.append(case(tpv, 2048, 2048))
print(json.dumps(cases))
