"""What the engineer reads and shares: terminal report, JSON, curve CSV, plots, HTML, SPICE, atomic writes."""
