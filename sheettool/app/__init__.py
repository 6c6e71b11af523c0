"""Application: the Python API, many inputs at once, the review pack and the JSON form of the results."""
