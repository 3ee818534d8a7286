"""Rendering a stored audit for people: the HTML report."""
