module github.com/pertinent/pertinent

go 1.26.8
