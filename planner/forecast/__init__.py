"""planner/forecast"""
