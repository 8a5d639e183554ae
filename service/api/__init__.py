"""The REST service.

App assembly, dependencies, routes, request and response bodies, problem answers, keys and
signed page links.
"""
