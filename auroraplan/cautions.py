"""Safety cautions shown wherever guides or guests read a plan."""

CAUTIONS = [
    "Winter roads at night can be icy and dark: drive to the conditions, check the road "
    "authority's current road and closure reports before leaving, and never stop on the "
    "carriageway; park fully off the road and wear a reflective vest on any roadside.",
    "Cold injures quickly when standing still: dress in layers with insulated boots, hat and "
    "mittens, keep the vehicle warm and fuelled, and carry spare warm clothing.",
    "Keep off sea ice, frozen lakes and rivers, and out of avalanche terrain, unless a licensed "
    "local guide says it is safe that day.",
    "Local rules, landowners' wishes and the guide's decisions come first; the guide may change "
    "or cancel a site for safety at any time.",
    "Chances shown are forecasts made from uncertain space-weather and cloud predictions. They "
    "are never a promise that the aurora will be seen.",
]

FORECAST_NOT_PROMISE = (
    "Aurora chances are forecasts, not promises: the aurora and the weather can change within "
    "minutes, and a good chance can still give a night with nothing to see."
)
