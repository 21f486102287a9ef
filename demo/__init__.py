"""The demo: the invented site Vellmarsh Lane (VML24) taken along the whole path of the data.

This package sits above every app. Each module runs one app's step through that
app's public functions; ``demo.steps.STEPS`` puts them in the order of the path
(record, order, evidence, interpretations, models). No app imports from here.
"""
