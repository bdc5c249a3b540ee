"""drillholes"""
