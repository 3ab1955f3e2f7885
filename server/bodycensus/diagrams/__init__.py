"""The diagrams floor: binned aggregates of a checked catalogue and the plotly figures drawn from
them."""
