"""The ward's records: reading admission and episode files, the ward as its records know it
at a moment, and the census rebuilt from them."""
