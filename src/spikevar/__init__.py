"""spikevar: cohort-scale spike-train variability and refractory-recovery analysis.

The package holds every computation; the Snakemake workflow only wires the steps together.
"""

__version__ = "0.1.0"
