"""The release caution: one text, shown by the app on every page, the PDF and the CLI."""

CAUTION = (
    "These figures are decision support. Release of a lot follows the site's quality system, "
    "the customer's requirements and applicable regulations, and is decided by an authorised person."
)
