"""The invented harbour's example records, shipped with the package (see README.md here)."""
