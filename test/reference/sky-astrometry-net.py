# Reads an astrometry.net solution (the .wcs header solve-field writes) with astropy and prints
# JSON: the frame centre it gives (CRVAL, with --crpix-center at the frame centre), its scale at
# CRPIX (sqrt |det CD|), and the radial distortion of its SIP field as this project's model states
# it: r_d = s r_u (1 + k1 (s r_u / R)^2), R = half the diagonal, fitted by linear least squares to
# r_d / r_u = a + b r_u^2 over a grid (s = a, k1 = b R^2 / a^3; numpy, independent of skyloupe).
import json, sys
import numpy as np
from astropy.io import fits

out = []
for f in sys.argv[1:]:
    h = fits.getheader(f)
    W, H = h['IMAGEW'], h['IMAGEH']
    R = np.hypot(W, H) / 2
    a_order, b_order = h.get('A_ORDER', 0), h.get('B_ORDER', 0)
    x, y = np.meshgrid(np.linspace(0, W - 1, 41), np.linspace(0, H - 1, 31))
    u = x.ravel() + 1 - h['CRPIX1']
    v = y.ravel() + 1 - h['CRPIX2']
    du = sum(h.get(f'A_{p}_{q}', 0.0) * u**p * v**q for p in range(a_order + 1) for q in range(a_order + 1 - p))
    dv = sum(h.get(f'B_{p}_{q}', 0.0) * u**p * v**q for p in range(b_order + 1) for q in range(b_order + 1 - p))
    rd = np.hypot(u, v)
    ru = np.hypot(u + du, v + dv)
    m = rd > 0.05 * R
    A = np.c_[np.ones(m.sum()), ru[m] ** 2]
    (a, b), res, *_ = np.linalg.lstsq(A, rd[m] / ru[m], rcond=None)
    cd = np.array([[h['CD1_1'], h['CD1_2']], [h['CD2_1'], h['CD2_2']]])
    scale = 3600 * np.sqrt(abs(np.linalg.det(cd)))
    out.append({'file': f, 'raDeg': h['CRVAL1'], 'decDeg': h['CRVAL2'], 'crpix': [h['CRPIX1'], h['CRPIX2']], 'width': W, 'height': H,
                'scaleArcsecPerPx': scale, 'radialScaleArcsecPerPx': scale / a, 'k1': b * R**2 / a**3, 'sipOrder': a_order})
print(json.dumps(out))
