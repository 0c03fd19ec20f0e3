"""The OpenMDAO classes this package uses, imported from their own modules.

``openmdao.api`` imports every driver, recorder and plotting back end (matplotlib among them),
which doubles the command line's start-up time; the package's modules write ``om.Group`` etc.
through this module instead. Users embedding the components may of course use
``openmdao.api``: these are the same classes.
"""
from openmdao.components.eq_constraint_comp import EQConstraintComp
from openmdao.core.explicitcomponent import ExplicitComponent
from openmdao.core.group import Group
from openmdao.core.problem import Problem
from openmdao.drivers.scipy_optimizer import ScipyOptimizeDriver

__all__ = ["EQConstraintComp", "ExplicitComponent", "Group", "Problem", "ScipyOptimizeDriver"]
