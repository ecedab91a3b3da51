"""Output formats. Reporters format findings; they never judge them."""

CAUTION = (
    "Screening results for design review; they do not replace the adopted local plumbing "
    "code, the arrester and appliance manufacturers' instructions, or the judgement of a "
    "licensed professional. Surges can burst pipes and fittings: verify critical cases with "
    "a detailed transient analysis."
)
