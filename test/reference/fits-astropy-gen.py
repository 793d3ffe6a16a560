"""Independent FITS reference data for test/reference/fits-astropy.test.ts.

Needs Debian's python3-astropy and python3-numpy (/usr/bin/python3).

  gen OUTDIR        write FITS files with astropy, the physical values computed here with
                    numpy from the stored integers (BZERO + BSCALE * stored, BLANK -> NaN,
                    FITS Standard 4.0 section 4.4.2.5) as little-endian float64 .f64 files,
                    and OUTDIR/manifest.json
  read FILE...      read FITS files written by skyloupe with astropy, verify them against the
                    standard (astropy verify('exception')), write FILE.f64 (physical values)
                    and print a JSON list of their headers
"""
import json
import os
import sys

import numpy as np
from astropy.io import fits


def write_f64(path, arr):
    np.asarray(arr, dtype='<f8').ravel(order='C').tofile(path)


def gen(outdir):
    os.makedirs(outdir, exist_ok=True)
    rng = np.random.default_rng(20240607)
    cases = []

    def add(name, hdul, expected, **facts):
        path = os.path.join(outdir, name + '.fits')
        hdul.writeto(path, overwrite=True, checksum=False)
        write_f64(path + '.f64', expected)
        # Cross-check: astropy's own reading gives the same physical values.
        with fits.open(path) as chk:
            img = next(h for h in chk if h.data is not None and getattr(h, 'is_image', False) and h.data.ndim >= 2)
            got = np.asarray(img.data, dtype='f8')
            if got.ndim == 3:
                got = got.mean(axis=0)
            if 'cube' not in name:
                assert np.array_equal(np.isnan(got), np.isnan(expected)), name
                assert np.allclose(np.nan_to_num(got), np.nan_to_num(expected), rtol=1e-6), name
        h, w = expected.shape
        cases.append(dict(name=name, file=path, expected=path + '.f64', width=int(w), height=int(h), **facts))

    # 1. unsigned 16-bit: astropy stores it as BITPIX 16 with BZERO 32768 (the standard's convention).
    u16 = rng.integers(0, 65536, size=(5, 7)).astype(np.uint16)
    u16[0, :5] = [0, 1, 32767, 32768, 65535]
    hd = fits.PrimaryHDU(u16)
    hd.header['EXPTIME'] = (30.0, 'exposure [s]')
    add('u16', fits.HDUList([hd]), u16.astype('f8'), bitpix=16, bzero=32768, saturation=32768 + 32767.0,
        displayTopRow='last')

    # 2. signed 16-bit, no scaling.
    i16 = rng.integers(-32768, 32768, size=(4, 6)).astype(np.int16)
    i16[0, :2] = [-32768, 32767]
    add('i16', fits.HDUList([fits.PrimaryHDU(i16)]), i16.astype('f8'), bitpix=16, saturation=32767.0)

    # 3. unsigned 8-bit.
    u8 = rng.integers(0, 256, size=(3, 9)).astype(np.uint8)
    u8[0, :2] = [0, 255]
    add('u8', fits.HDUList([fits.PrimaryHDU(u8)]), u8.astype('f8'), bitpix=8, saturation=255.0)

    # 4. signed 32-bit (values beyond 2^24 round when kept as float32).
    i32 = rng.integers(-2**31, 2**31, size=(4, 5)).astype(np.int32)
    i32[0, :3] = [-2**31, 2**31 - 1, 16777217]
    add('i32', fits.HDUList([fits.PrimaryHDU(i32)]), i32.astype('f8'), bitpix=32, saturation=float(2**31 - 1))

    # 5. signed 64-bit (exact in float64 below 2^53).
    i64 = rng.integers(-2**50, 2**50, size=(3, 4)).astype(np.int64)
    i64[0, 0] = -12345678901
    add('i64', fits.HDUList([fits.PrimaryHDU(i64)]), i64.astype('f8'), bitpix=64)

    # 6. 32-bit float with NaN and extremes.
    f32 = (rng.standard_normal(size=(6, 8)) * 1000).astype(np.float32)
    f32[0, :5] = [np.nan, 1.5e-30, -3.25e30, 0.0, np.float32(np.finfo(np.float32).max)]
    add('f32', fits.HDUList([fits.PrimaryHDU(f32)]), f32.astype('f8'), bitpix=-32, saturation=None)

    # 7. 64-bit float.
    f64 = rng.standard_normal(size=(5, 5)) * 1e5
    f64[1, 1] = np.nan
    add('f64', fits.HDUList([fits.PrimaryHDU(f64)]), f64, bitpix=-64, saturation=None)

    # 8. scaled 16-bit with BLANK: physical = BZERO + BSCALE * stored, stored == BLANK -> NaN.
    st = rng.integers(-32768, 32768, size=(4, 7)).astype(np.int16)
    st[0, :3] = [-32768, 32767, 0]
    hd = fits.PrimaryHDU(st)
    hd.header['BSCALE'] = 0.25
    hd.header['BZERO'] = -100.0
    hd.header['BLANK'] = -32768
    phys = -100.0 + 0.25 * st.astype('f8')
    phys[st == -32768] = np.nan
    # BLANK takes the lowest code, so the highest valid code 32767 still defines saturation.
    add('scaled16', fits.HDUList([hd]), phys, bitpix=16, saturation=-100.0 + 0.25 * 32767)

    # 9. colour cube NAXIS3 = 3 -> mean of the planes; a pixel at the top code in any plane stays at it.
    cube = rng.integers(0, 60000, size=(3, 4, 6)).astype(np.uint16)
    cube[1, 0, 0] = 65535  # green clipped only
    lum = cube.astype('f8').sum(axis=0) / 3.0
    lum[(cube == 65535).any(axis=0)] = 65535.0
    add('cube', fits.HDUList([fits.PrimaryHDU(cube)]), lum, bitpix=16, saturation=65535.0, cube=True)

    # 10. empty primary (NAXIS = 0), a binary table, then the image extension; header oddities.
    pri = fits.PrimaryHDU()
    pri.header['INSTRUME'] = ("O'Brien's cam", 'string with quotes')
    pri.header['EXPTIME'] = 120.0
    pri.header['DATE-OBS'] = '2024-03-01T22:10:05.5'
    tab = fits.BinTableHDU.from_columns([fits.Column(name='a', format='E', array=np.arange(10, dtype='f4'))])
    img = (rng.standard_normal(size=(7, 11)) * 50 + 1000).astype(np.float32)
    ext = fits.ImageHDU(img)
    ext.header['ROWORDER'] = 'TOP-DOWN'
    ext.header['BAYERPAT'] = ('RGGB', 'colour filter layout')
    ext.header['FOCALLEN'] = (400.0, '[mm]')
    ext.header['APTDIA'] = (80.0, '[mm]')
    ext.header['XPIXSZ'] = (3.76, '[um] after binning')
    ext.header['XBINNING'] = 1
    ext.header['OBJECT'] = ('M 31 / Andromeda', 'slash inside the string')
    ext.header['HIERARCH ESO DET CHIP NAME'] = 'chip 1'
    ext.header['HISTORY'] = 'history text / with slash'
    add('ext', fits.HDUList([pri, tab, ext]), img.astype('f8'), bitpix=-32, saturation=None,
        displayTopRow='first', cfa='RGGB', focalLengthMm=400.0, apertureMm=80.0, pixelSizeUm=3.76,
        instrume="O'Brien's cam", object='M 31 / Andromeda', exptime=120.0, hdu=2)

    # 11. a larger random frame (odd size), unsigned 16-bit.
    big = rng.integers(0, 65536, size=(201, 333)).astype(np.uint16)
    add('big', fits.HDUList([fits.PrimaryHDU(big)]), big.astype('f8'), bitpix=16, saturation=65535.0)

    # 12. tile-compressed images (astropy CompImageHDU): decoded, values as astropy reads them.
    comp = fits.HDUList([fits.PrimaryHDU(), fits.CompImageHDU(np.arange(48, dtype=np.int16).reshape(6, 8))])
    add('compressed', comp, np.arange(48, dtype='f8').reshape(6, 8), bitpix=16, saturation=32767.0)
    noisy = (rng.normal(1000, 30, size=(97, 131)) + 0.25).astype(np.float32)
    # (no NaN here: astropy 5.2 writes ZSCALE = NaN for a quantized tile holding a NaN; fpack's handling is tested elsewhere)
    for algo in ('RICE_1', 'GZIP_1', 'GZIP_2'):
        hd = fits.CompImageHDU(rng.integers(0, 65536, size=(77, 123)).astype(np.uint16), compression_type=algo, tile_shape=(16, 50))
        add('comp_u16_' + algo, fits.HDUList([fits.PrimaryHDU(), hd]), hd.data.astype('f8'), bitpix=16, saturation=65535.0)
    # quantized float (astropy's default: RICE_1, SUBTRACTIVE_DITHER_1): expected = astropy's own reading
    qpath = os.path.join(outdir, 'comp_f32q.fits')
    fits.HDUList([fits.PrimaryHDU(), fits.CompImageHDU(noisy, quantize_level=4.0)]).writeto(qpath, overwrite=True)
    with fits.open(qpath) as chk:
        write_f64(qpath + '.f64', np.asarray(chk[1].data, dtype='f8'))
    cases.append(dict(name='comp_f32q', file=qpath, expected=qpath + '.f64', width=131, height=97, saturation=None))

    with open(os.path.join(outdir, 'manifest.json'), 'w') as f:
        json.dump(dict(astropy=__import__('astropy').__version__, numpy=np.__version__, cases=cases), f, indent=1)


def read(paths):
    out = []
    for p in paths:
        with fits.open(p) as hdul:
            hdul.verify('exception')  # raises on any card that breaks the standard
            h = hdul[0]
            # Header as stored: taken before the data are touched (astropy then rewrites BITPIX/BZERO).
            keys = [k for k in h.header.keys() if k not in ('COMMENT', 'HISTORY', '')]
            header = {k: (h.header[k] if isinstance(h.header[k], (bool, int, float, str)) else str(h.header[k])) for k in keys}
            comments = {k: h.header.comments[k] for k in keys}
            history = [str(x) for x in h.header.get('HISTORY', [])]
            write_f64(p + '.f64', np.asarray(h.data, dtype='f8'))
            with fits.open(p, do_not_scale_image_data=True) as raw:
                write_f64(p + '.stored.f64', np.asarray(raw[0].data, dtype='f8'))
            out.append(dict(file=p, header=header, comments=comments, history=history, size=os.path.getsize(p)))
    print(json.dumps(out))


if __name__ == '__main__':
    if sys.argv[1] == 'gen':
        gen(sys.argv[2])
    elif sys.argv[1] == 'read':
        read(sys.argv[2:])
    else:
        sys.exit('usage: fits-astropy-gen.py gen OUTDIR | read FILE...')
