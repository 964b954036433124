"""The names of the stages a campaign run goes through, for its summary.

The run calls each stage by a plain import; these lists only name them in the summary and in
the store (which stages a frame's stored results came from).
"""

__all__ = ["FRAME_STAGES", "CAMPAIGN_STEPS"]

#: Stages that run on each science frame (in a worker), in order.
FRAME_STAGES = ("calibration", "geometry", "photometry", "nucleus")

#: Steps that run once per campaign on the stored results, in order.
CAMPAIGN_STEPS = ("rotation", "activity", "size", "report")
