"""Video in: a filmed drop (a video file or numbered PNG frames) -> a track.

``frames`` reads the film, ``silhouette`` finds the body in one frame,
``track`` turns a film into the track table (``hopscape track``), and
``render`` films simulated drops for the tests and the demo.
"""
