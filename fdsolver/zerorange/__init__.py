"""The zero-range (point-interaction) model and how far finite wells are from it: closed-form point states,
narrow-well corrections and zero-energy counts, width ladders of finite replacements, the delta comb.
"""
