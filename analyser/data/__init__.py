"""The input side: campaign file and data tables -> a validated Campaign.

`load(path)` (used by analyser.campaign.load_campaign) reads everything,
converts epochs and units and raises one CampaignError listing every problem;
`campaign_summary` and `check_command` power `analyser check`.
"""

from .loader import load
from .summary import campaign_summary, check_command, format_summary

__all__ = ["load", "campaign_summary", "check_command", "format_summary"]
