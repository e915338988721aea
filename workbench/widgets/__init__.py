"""Notebook panels (ipywidgets); they only wire controls to public functions and plots."""
