"""Column names of the Sobol' tables, for the method and the charts that draw them."""

SOBOL_COLUMNS = ("parameter", "S1", "S1_conf", "ST", "ST_conf", "rank")
SECOND_ORDER_COLUMNS = ("parameter_1", "parameter_2", "S2", "S2_conf")
CONVERGENCE_COLUMNS = ("base_samples", "parameter", "S1", "S1_conf", "ST", "ST_conf")
