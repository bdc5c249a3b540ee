"""domains"""
