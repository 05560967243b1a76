"""Engine: members, segments, gradient factors, resistance.

Pure computation: it never prints, never touches files and never imports click.
"""
