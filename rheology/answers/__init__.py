"""Answers drawn from an envelope: transitions, integrated strength, point answers, words."""
