"""Choice lists for the fleet records. Stored values are stable API names; labels are ours."""

from django.db import models


class Application(models.TextChoices):
    MEDIUM_TEMP = "medium_temp", "Medium-temperature cooler"
    LOW_TEMP = "low_temp", "Low-temperature freezer"
    REACH_IN = "reach_in", "Reach-in"
    ICE_MACHINE = "ice_machine", "Ice machine"
    OTHER = "other", "Other"


class DocumentKind(models.TextChoices):
    NAMEPLATE_PHOTO = "nameplate_photo", "Nameplate photo"
    WIRING_DIAGRAM = "wiring_diagram", "Wiring diagram"
    COMMISSIONING_SHEET = "commissioning_sheet", "Commissioning sheet"
    PHOTO = "photo", "Photo"
    OTHER = "other", "Other document"


class ChargeBasis(models.TextChoices):
    """How an appliance's full charge was determined: the ways 40 CFR 82.152 ("full
    charge") and 84.103 allow, alone or combined."""

    NAMEPLATE = "nameplate", "Manufacturer's nameplate"
    CALCULATED = "calculated", "Calculated from component sizes and line lengths"
    ESTABLISHED_RANGE = "established_range", "Established range of best estimates"
    COMBINED = "combined", "A combination of these"


class ApplianceType(models.TextChoices):
    """Appliance types of the leak-repair rules (40 CFR 82.152 / 84.102)."""

    COMMERCIAL_REFRIGERATION = "commercial_refrigeration", "Commercial refrigeration"
    INDUSTRIAL_PROCESS = "industrial_process", "Industrial process refrigeration"
    COMFORT_COOLING = "comfort_cooling", "Comfort cooling"
    OTHER = "other", "Other"


class MeteringDevice(models.TextChoices):
    TXV = "txv", "Thermostatic expansion valve (TXV)"
    EEV = "eev", "Electronic expansion valve (EEV)"
    CAPILLARY = "capillary", "Capillary tube"
    FIXED_ORIFICE = "fixed_orifice", "Fixed orifice"


class CondenserType(models.TextChoices):
    AIR = "air", "Air-cooled"
    WATER = "water", "Water-cooled"


class HeadPressureControl(models.TextChoices):
    """How a unit keeps its condensing temperature up in cold weather (the core's
    ``types.HEAD_PRESSURE_CONTROLS``). Blank on a unit: not known, the application default."""

    NONE = "none", "None: the head follows the outdoor air"
    FAN_CYCLING = "fan_cycling", "Condenser fans switched off and on"
    FLOODING = "flooding", "Condenser backed up with liquid (flooding valve)"
    VARIABLE_SPEED = "variable_speed", "Condenser fan speed varied"
    OTHER = "other", "Another kind"


class TemperatureBasis(models.TextChoices):
    """Which saturation temperature a glide blend's design TD and split are given on (the
    core's ``types.TEMPERATURE_BASES``)."""

    DEW = "dew", "Dew point"
    MID_POINT = "mid_point", "Mid-point between dew and bubble"


class RefrigerantKind(models.TextChoices):
    PURE = "pure", "Single compound"
    AZEOTROPE = "azeotrope", "Azeotropic blend"
    ZEOTROPE = "zeotrope", "Zeotropic blend"


class ComponentKind(models.TextChoices):
    RUN_CAPACITOR = "run_capacitor", "Run capacitor"
    START_CAPACITOR = "start_capacitor", "Start capacitor"
    START_RELAY = "start_relay", "Start relay"
    HARD_START_KIT = "hard_start_kit", "Hard-start kit"
    CONTACTOR = "contactor", "Contactor"
    CONDENSER_FAN_MOTOR = "condenser_fan_motor", "Condenser fan motor"
    EVAPORATOR_FAN_MOTOR = "evaporator_fan_motor", "Evaporator fan motor"
    COMPRESSOR = "compressor", "Compressor"
    METERING_VALVE = "metering_valve", "Metering valve"


class VisitKind(models.TextChoices):
    PLANNED = "planned", "Planned maintenance"
    CALL = "call", "Service call"
    FOLLOW_UP = "follow_up", "Follow-up"


class VisitStatus(models.TextChoices):
    SCHEDULED = "scheduled", "Scheduled"
    IN_PROGRESS = "in_progress", "In progress"
    SUBMITTED = "submitted", "Submitted for review"
    REVIEWED = "reviewed", "Reviewed"
    CANCELLED = "cancelled", "Cancelled"


#: The only moves a visit may make; anything else is refused (409 on the API).
VISIT_TRANSITIONS: dict[str, frozenset[str]] = {
    VisitStatus.SCHEDULED: frozenset({VisitStatus.IN_PROGRESS, VisitStatus.CANCELLED}),
    VisitStatus.IN_PROGRESS: frozenset({VisitStatus.SUBMITTED, VisitStatus.CANCELLED}),
    # A returned visit goes back to the technician.
    VisitStatus.SUBMITTED: frozenset({VisitStatus.REVIEWED, VisitStatus.IN_PROGRESS}),
    VisitStatus.REVIEWED: frozenset(),
    VisitStatus.CANCELLED: frozenset(),
}


class Stage(models.TextChoices):
    """When in a visit a reading set was taken. Sets taken while adjusting (a TXV turned a
    step at a time) are kept as the visit's record but stand for neither the unit as found
    nor as left, so trends and reports leave them out."""

    AS_FOUND = "as_found", "As found"
    ADJUSTING = "adjusting", "While adjusting"
    AS_LEFT = "as_left", "As left"


#: The stages whose reading sets stand for the unit's state in trends, flags and reports.
STANDING_STAGES = (Stage.AS_FOUND, Stage.AS_LEFT)


class SightGlass(models.TextChoices):
    CLEAR = "clear", "Clear"
    BUBBLES = "bubbles", "Bubbles"
    NONE = "none", "No sight glass"


class NotReadReason(models.TextChoices):
    """Why a unit on a visit has no readings when the visit is submitted."""

    NOT_ACCESSIBLE = "not_accessible", "Not accessible"
    OFF_BY_DESIGN = "off_by_design", "Off by design (not in use)"
    NOT_RUNNING = "not_running", "Not running"
    OTHER = "other", "Other (see the note)"


class RefrigerantEventKind(models.TextChoices):
    ADDED = "added", "Refrigerant added"
    RECOVERED = "recovered", "Refrigerant recovered"
    LEAK_FOUND = "leak_found", "Leak found"
    LEAK_REPAIRED = "leak_repaired", "Leak repaired"
    INITIAL_VERIFICATION = "initial_verification", "Initial verification test"
    FOLLOW_UP_VERIFICATION = "follow_up_verification", "Follow-up verification test"


class LeakRateExemption(models.TextChoices):
    """Additions the leak-rate rules do not calculate (40 CFR 82.157(b)(1) and 84.106)."""

    NONE = "", "Counts toward the leak rate"
    AFTER_INSTALLATION = "after_installation", "Charging after installation"
    AFTER_RETROFIT = "after_retrofit", "Charging after a retrofit"
    SEASONAL_VARIANCE = "seasonal_variance", "Seasonal variance"


class Role(models.TextChoices):
    """Django group names of the three roles."""

    OFFICE = "office", "Office"
    TECHNICIAN = "technician", "Technician"
    MANAGER = "manager", "Manager"


#: The group that makes an office user an office administrator, who manages people: adds,
#: disables and re-roles technicians and managers and revokes a phone's token. Not a role
#: of its own: it widens no reach, and means nothing without the office role.
OFFICE_ADMIN_GROUP = "office admin"
