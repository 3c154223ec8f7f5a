"""Long runs for a fixed time budget (``feeler campaign``): rotation, growth, shards, resume.

See :class:`~feeler.campaign.engine.Campaign`; the call log is :mod:`feeler.campaign.calllog`.
"""

from __future__ import annotations

from feeler.campaign.calllog import CallLog, read_call_log
from feeler.campaign.database import open_example_db
from feeler.campaign.engine import ROTATION, Campaign, CampaignOptions, parse_duration, parse_shard, rotation_step, shard_tools

__all__ = [
    "ROTATION",
    "CallLog",
    "Campaign",
    "CampaignOptions",
    "open_example_db",
    "parse_duration",
    "parse_shard",
    "read_call_log",
    "rotation_step",
    "shard_tools",
]
