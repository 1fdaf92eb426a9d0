"""Bundled demo scenarios, installed as the data package ``planner.demo``."""
