"""Frame-by-frame immersion checks of mesh animations (Blender-free)."""
