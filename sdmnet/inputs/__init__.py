"""Files -> model: the typed data classes, the loaders that validate files into them, the bundled
data, and the text `sdmnet check` prints.
"""
