"""File edges: link files, site files, reports and exports."""
