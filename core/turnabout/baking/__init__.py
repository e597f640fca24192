"""Baking without Blender: what a bake stores and the point-cache file it writes.

Read in order: ``plan.py`` (the validated frame layout, the memory estimate and its refusal,
the cache file's name) -> ``pc2.py`` (the PC2 point-cache writer and reader). The add-on's
``bake.py`` only moves the planned shapes into Blender data.
"""
