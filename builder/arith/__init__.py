"""arith"""
