"""Reports: console tables, JSON data, bill of materials, HTML with plots."""
