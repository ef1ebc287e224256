"""Pure physics for strainline: numpy arrays in, numpy arrays out.

Nothing in this package reads files, prints, or imports YAML, pandas, plotly or pymoo.
SI units throughout (metres, pascals, hertz); a row of every batch array is one candidate.
"""
