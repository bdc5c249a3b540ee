"""minerals"""
