"""Site files shared by the tests (an invented ridge in southern Spain: plausible coordinates,
no real observatory)."""

#: Astronomical darkness, 30 deg altitude limit, no Moon limit: only the sky decides.
TEST_RIDGE = """name = "Test Ridge (invented)"
latitude_deg = 37.62
longitude_deg = -3.12
elevation_m = 1500
timezone = "Europe/Madrid"
min_altitude_deg = 30
darkness = "astronomical"
moon_min_separation_deg = 0
"""
