"""site"""
