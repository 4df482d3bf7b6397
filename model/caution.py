"""The caution every o2transit output carries: one text for the screens, files and commands."""

CAUTION = (
    "o2transit is an aid for education and planning, not a medical device. Verify against "
    "measurements; defer to local protocols and licensed clinical practice."
)
