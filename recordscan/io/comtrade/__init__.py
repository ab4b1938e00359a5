"""recordscan.io.comtrade."""
