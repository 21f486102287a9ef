"""The invented demo site, Vellmarsh Lane (project VML24), and its loader."""
