"""planner/simulate"""
