"""planner/report"""
