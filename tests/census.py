"""Census regions and divisions of the US, for tests on statsmodels' statecrime data."""

# US Census Bureau, "Census Regions and Divisions of the United States" (reference map,
# www2.census.gov/geo/pdfs/maps-data/maps/reference/us_regdiv.pdf): four regions, nine
# divisions, each division wholly within one region. Written out from that map (from
# memory of it); the 51 states and DC below are every row of statecrime.
CENSUS_DIVISIONS = {
    "New England": (
        "Connecticut",
        "Maine",
        "Massachusetts",
        "New Hampshire",
        "Rhode Island",
        "Vermont",
    ),
    "Middle Atlantic": ("New Jersey", "New York", "Pennsylvania"),
    "East North Central": ("Illinois", "Indiana", "Michigan", "Ohio", "Wisconsin"),
    "West North Central": (
        "Iowa",
        "Kansas",
        "Minnesota",
        "Missouri",
        "Nebraska",
        "North Dakota",
        "South Dakota",
    ),
    "South Atlantic": (
        "Delaware",
        "District of Columbia",
        "Florida",
        "Georgia",
        "Maryland",
        "North Carolina",
        "South Carolina",
        "Virginia",
        "West Virginia",
    ),
    "East South Central": ("Alabama", "Kentucky", "Mississippi", "Tennessee"),
    "West South Central": ("Arkansas", "Louisiana", "Oklahoma", "Texas"),
    "Mountain": (
        "Arizona",
        "Colorado",
        "Idaho",
        "Montana",
        "Nevada",
        "New Mexico",
        "Utah",
        "Wyoming",
    ),
    "Pacific": ("Alaska", "California", "Hawaii", "Oregon", "Washington"),
}
CENSUS_REGIONS = {  # same source
    "Northeast": ("New England", "Middle Atlantic"),
    "Midwest": ("East North Central", "West North Central"),
    "South": ("South Atlantic", "East South Central", "West South Central"),
    "West": ("Mountain", "Pacific"),
}
REGION_OF = {d: region for region, divisions in CENSUS_REGIONS.items() for d in divisions}
