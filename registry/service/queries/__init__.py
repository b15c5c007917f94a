"""The read side of the catalogue: one query per page, each returning frozen dataclasses that
the web pages only render. Every query reads in one read-only unit of work."""

from registry.service.queries.after_release import (
    AfterReleaseEvidence,
    after_release_evidence,
    after_release_states,
)
from registry.service.queries.catalogue import CataloguePage, catalogue_page
from registry.service.queries.compare import ComparePage, compare_page
from registry.service.queries.datasets import DatasetPage, dataset_page
from registry.service.queries.events import EventsPage, events_page
from registry.service.queries.lineage import LineagePage, lineage_page
from registry.service.queries.models import ModelPage, model_page
from registry.service.queries.versions import VersionPage, version_page

__all__ = ["AfterReleaseEvidence", "CataloguePage", "ComparePage", "DatasetPage", "EventsPage",
           "LineagePage", "ModelPage", "VersionPage", "after_release_evidence",
           "after_release_states", "catalogue_page", "compare_page", "dataset_page",
           "events_page", "lineage_page", "model_page", "version_page"]
