"""The cautions every output carries, in one place: the JSON report and the Summary print them
whole; the command-line help and ``explain`` print their one-sentence form."""

from __future__ import annotations

CAUTIONS = (
    "Surface-temperature limits for personnel protection depend on contact time and surface "
    "material (ASTM C1055, ISO 13732-1; 5 s contact is the usual industrial basis).",
    "Cold lines need a continuous vapour retarder; moisture ingress is not calculated.",
    "Insulation delays freezing but never prevents it: water that may stand longer than its time "
    "to freeze needs heat tracing or to keep flowing.",
    "Energy-code minimums are built in as transcribed from ASHRAE 90.1-2016 and GEG 2024: the edition "
    "and amendments the local authority adopts govern.",
    "A tracing duty is the heat to replace, not a heater design: heater output, hazardous-area "
    "temperature class and circuits follow IEEE 515 / IEC/IEEE 60079-30 and qualified practice.",
    "Results are design estimates: review them under the owner's specification, local codes "
    "and licensed engineering practice.",
)

# the same, in one sentence (help texts, the end of an explanation)
SHORT = ("Cautions: surface limits for personnel protection depend on contact time and surface "
         "material (ASTM C1055, ISO 13732-1); cold lines need a continuous vapour retarder; insulation "
         "delays freezing but never prevents it; results are design estimates to be reviewed under the "
         "owner's specification, local codes and licensed practice.")
