"""Every limit of the service, in one place: a leaf module that imports nothing of the project.

Request limits are checked with 422 before any model work (the schemas); they are sized on a
2-core machine so that the largest allowed request finishes well inside the gunicorn timeout
(openapi/API.md, "Limits"), and the OpenAPI document carries the same numbers. The engine reads
MAX_SHIFTER_CHANGE, the model's own ceiling, from here too.
"""

# --- one request ---------------------------------------------------------------------------

MAX_HORIZON = 600
MAX_POLICIES = 16
MAX_SHOCKS = 64
MAX_SHIFTERS_PER_CURVE = 32
MAX_SHIFTER_NAME_LENGTH = 64
MAX_NAME_LENGTH = 80
MAX_BODY_BYTES = 8 * 1024 * 1024

# --- one number of a request ---------------------------------------------------------------

#: Prices and money amounts (per unit per price interval).
MAX_MONEY = 1e12
#: Quantities (units per price interval).
MAX_QUANTITY = 1e15
#: Absolute value of any elasticity.
MAX_ELASTICITY = 100.0
#: Largest fractional change one shock field may ask for (step, ramp or path value).
MAX_SHOCK_CHANGE = 1000.0
#: Largest period number (start, end, ramp length, schedule length, discount step).
MAX_PERIOD = 1_000_000
#: Largest rate per period (growth, growth caps, discount rates); every rate is above -1.
MAX_RATE = 10.0
#: Price intervals per model period (12 for monthly rents and yearly periods).
MAX_PAYMENTS_PER_PERIOD = 1000.0
#: Shortest half-life of a geometric schedule, in periods.
MIN_HALF_LIFE = 0.001
MAX_DISCOUNT_STEPS = 100

# --- a batch -------------------------------------------------------------------------------

MAX_BATCH_SCENARIOS = 1000
#: Total policy-periods of one batch: sum over scenarios of policies x (longest horizon + 1).
#: 200,000 (e.g. 1,000 scenarios x 4 policies x 49 periods) answers in about a second here
#: with a body of about 60 MB; larger sweeps belong in several batches or the Python API.
MAX_POLICY_PERIODS = 200_000

# --- workbooks ------------------------------------------------------------------------------

#: Cells of one workbook answer (every sheet): openpyxl writes about 100,000 a second here, so
#: the largest workbook takes about 5 s; a larger answer is a 422 that suggests CSV.
MAX_WORKBOOK_CELLS = 500_000

# --- bands ---------------------------------------------------------------------------------

MAX_DRAWS = 100_000
#: draws x (horizon + 1) x policies of one bands request (100,000 x 41 x 4 fits).
MAX_DRAW_CELLS = 16_400_000
#: draws x (horizon + 1) x banded series of one bands request: the float32 values it keeps
#: (394 MB). Each policy bands six series, so this is MAX_DRAW_CELLS for most requests; the
#: stock schedule, a partial ceiling or a drawn inflation rate band more series per policy.
MAX_BAND_VALUES = 6 * MAX_DRAW_CELLS
MAX_PERCENTILES = 21
#: Largest seed of the draws (a signed 64-bit integer).
MAX_SEED = 2**63 - 1

# --- charts --------------------------------------------------------------------------------

MAX_CHART_LABEL_LENGTH = 40
MAX_CHART_TITLE_LENGTH = 120

# --- the scenario library -------------------------------------------------------------------

MAX_SCENARIO_NAME_LENGTH = 200
MAX_SCENARIO_NOTES_LENGTH = 10_000
MAX_SCENARIO_TAGS = 20
MAX_SCENARIO_TAG_LENGTH = 40
#: Characters of one display unit a record keeps (its currency, what homes are counted as, ...).
MAX_SCENARIO_UNIT_LENGTH = 40
#: Records one owner (one API key, or the single owner of a keyless install) may keep; the
#: setting SHOCKPATH_LIBRARY_MAX_RECORDS may lower or raise it.
MAX_RECORDS_PER_OWNER = 1_000
#: Revisions one record may reach (SHOCKPATH_LIBRARY_MAX_REVISIONS).
MAX_REVISIONS_PER_RECORD = 200
#: Records on one page of GET /v1/scenarios.
MAX_SCENARIO_PAGE = 100
DEFAULT_SCENARIO_PAGE = 20

# --- the model -----------------------------------------------------------------------------

#: Largest fractional change a shifter may reach once its shocks are summed (a million-fold
#: rise); beyond it the model's numbers stop meaning anything and floating point starts to
#: overflow. Several shocks of at most MAX_SHOCK_CHANGE each may add up past it: the engine
#: reports that scenario as an input error.
MAX_SHIFTER_CHANGE = 1.0e6
