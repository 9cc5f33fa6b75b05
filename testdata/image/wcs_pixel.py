#!/usr/bin/env python3
"""Print the 0-based pixel coordinates astropy.wcs assigns to sky positions.

usage: wcs_pixel.py IMAGE.fits RA DEC [RA DEC ...]   (degrees)

One line "x y" per position (x along FITS axis 1, y along axis 2), used by
deflect's Go tests as an outside check of the WCS headers deflect writes.
"""
import sys

from astropy.io import fits
from astropy.wcs import WCS


def main():
    path, vals = sys.argv[1], [float(v) for v in sys.argv[2:]]
    with fits.open(path) as hdul:
        w = WCS(hdul[0].header)
    for ra, dec in zip(vals[0::2], vals[1::2]):
        x, y = w.all_world2pix([[ra, dec]], 0)[0]
        print(f"{x:.12f} {y:.12f}")


if __name__ == "__main__":
    main()
