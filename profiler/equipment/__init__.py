"""Equipment: radio profiles (modulation steps), antennas, and the figures derived from them.

Modules: ``radios`` (radio profile files), ``modulation`` (adaptive modulation per link),
``antennas`` (antenna files, aperture gain and beamwidth), ``installation`` (what installers
need at each mast: tilt, true and magnetic azimuth, the level to align to).
"""
