module parch

go 1.26.0
