"""A spec turned into physics once: scenarios, kinetics, target and model settings."""

from obvert.problem.foods import food_table
from obvert.problem.model import Case, Problem, problem_of, surroundings
from obvert.problem.scenarios import Scenario

__all__ = ["Case", "Problem", "Scenario", "food_table", "problem_of", "surroundings"]
