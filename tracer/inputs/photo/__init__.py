"""From a photo of the cut end to a measured section: load, scale, segment, trace.

Heavy libraries (OpenCV, Pillow, PyMaxflow) are imported inside the functions that use them.
"""
