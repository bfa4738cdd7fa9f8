# Sourced by the benchmarks: writes "$work/adult-pilot.csv" (adult.data with occupation,
# relationship and education each blanked outside an independent random 20% pilot, awk seed 11)
# and "$work/costs.csv" (those 3 features and 2 rows options). Needs $data and $work.
awk -v seed=11 'BEGIN { srand(seed); FS = ", "; OFS = ", " }
  NF >= 15 { if (rand() >= 0.2) $7 = "?"; if (rand() >= 0.2) $8 = "?"; if (rand() >= 0.2) $4 = "?"; print }' \
  "$data" > "$work/adult-pilot.csv"
cat > "$work/costs.csv" <<'SHEET'
name,kind,column,per_row,fixed,max_rows,step,sensitive,note
occupation,feature,occupation,0.40,1000,,,no,Occupation from the employer survey
relationship,feature,relationship,0.30,500,,,yes,Household relationship
education,feature,education,0.20,500,,,no,Highest education level
more-records,rows,,1.50,0,30000,10000,no,Another census extract
more-women,rows,sex=Female,2.50,2000,10000,2500,no,Targeted sample of women
SHEET
